// Package figure draws the figures of a gaptrace report with gonum/plot:
// the velocity profile of a shear phase, the space-time maps of the gap,
// the wall slip and bulk rate against time, the displacement after
// cessation, a video frame with the walls, gap axes and tracks drawn over
// it as vector marks, and the detection diagnostics.
//
// Each figure comes back as a Figure: PNG at DPI with a pHYs chunk that
// says so, SVG with a font list, PDF with its face embedded, and a CSV of
// the data it plots; sized for a journal column (SingleColumnCM or
// DoubleColumnCM wide) with text from MinFontPt to MaxFontPt.
//
// All figures share one house style, Style, set in House and described
// there; NewPlot, Panel and Compose give other packages the same look.
//
// Inputs are plain structs in physical units: lengths in um (across the gap
// y_um from the stationary wall; GapAxis says how a figure draws it),
// velocities in um/s, rates in s⁻¹, times in s, image positions in px.
// Colours are the Okabe & Ito (2008) set for lines and a blue-to-yellow
// CIE L*a*b* ramp for heat maps, and series differ by marker and dash as
// well as by colour.
package figure
