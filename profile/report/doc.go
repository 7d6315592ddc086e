// Package report writes the lab report of a gaptrace run: report.html, one
// self-contained page that opens offline (styles inline, figures embedded
// as data: URIs, every text escaped), and each figure beside it as PNG, SVG
// and PDF with the data it plots as CSV (package figure draws them).
//
// The page gives the experiment (name, geometry, imposed motion as the
// experiment file gives it and the convention of its nominal rate, the
// experiment file), the calibration, the verdicts in plain words with their
// numbers and uncertainties, tables of the shear phases, bands and the time
// after the stop, the figures with captions, the warnings, the lab record
// (sample, temperature, operator, notes, the input's size and SHA-256, the
// command line, the version), and cautions on what the measurement cannot
// see and on safety, for the tool's geometry. A number that is unknown
// (NaN, or null in summary.json) prints as "not determined".
//
// Numbers with an uncertainty follow one rule: the uncertainty to two
// significant digits, the value to the same decimal place. Slip that the
// data do not resolve is written as an upper limit, 3 standard
// uncertainties above the measured value.
//
// Input is the run's summary.Summary plus the data of the figures, in
// physical units (Data). Lengths are in um, velocities in um/s, rates in
// s⁻¹, times in s.
package report
