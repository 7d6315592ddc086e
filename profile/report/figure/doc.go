// Package figure draws the figures of a gaptrace report with gonum/plot and,
// for the video frame, OpenCV: the velocity profile of a shear phase, the
// space-time map of the gap, the wall slip and bulk rate against time, the
// displacement after cessation, the annotated frame and the detection
// diagnostics. Each figure comes back as PNG (300 dpi) and SVG bytes, sized
// for a journal column (SingleColumnCM or DoubleColumnCM wide) with no text
// smaller than MinFontPt.
//
// Inputs are plain structs in physical units: lengths in um (across the gap
// y_um from the stationary wall), velocities in um/s, rates in 1/s, times in
// s, image positions in px. Colours are the Okabe & Ito (2008) set for lines
// and a blue-to-yellow CIE L*a*b* ramp for heat maps, and series differ by
// marker and dash as well as by colour.
package figure
