// Package report writes the lab report of a gaptrace run: report.html, one
// self-contained page that opens offline (styles inline, figures embedded
// as data: URIs, every text escaped), and each figure beside it as PNG and
// SVG (package figure draws them).
//
// The page gives the experiment (name, geometry, imposed motion, the
// experiment file), the calibration, the verdicts in plain words with their
// numbers and uncertainties, tables of the shear phases, bands and the time
// after the stop, the figures with captions, the warnings, and cautions on
// what the measurement cannot see and on safety. A number that is unknown
// (NaN, or null in summary.json) prints as "not determined".
//
// Input is the run's summary.Summary plus the data of the figures, in
// physical units (Data). Lengths are in um, velocities in um/s, rates in
// 1/s, times in s.
package report
