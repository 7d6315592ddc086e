// Package synth renders synthetic rheometer-gap experiments whose ground
// truth is known exactly, for testing every later stage of gaptrace.
//
// A Scenario describes a side-view camera looking into the gap between two
// walls (plates beyond sharp, tilted wall lines with a reflection line on
// each), tracers moving with a prescribed flow (rest; steady shear with any
// piecewise-linear Profile, with slip at either wall and several bands; step
// strains; and after the last shear step a Cessation field: none, slip at a
// wall, or a failure plane with elastic recoil), and the camera (pixel-
// integrated Gaussian spots, shot and read noise, vignetting, jitter, bright
// or dark polarity, 8 or 16 bit).
//
// Positions gives the true tracer states of any frame without rendering;
// Render draws a frame; Truth gives the true value of the summary.json
// fields that describe the sample, in synth's own types under the same JSON
// names (SummaryTruth), so that the test bed depends on nothing of the
// analysis it checks; Write stores a video or a folder of frames with the experiment file,
// truth.json and truth_tracks.csv. Builtin and List name reproducible
// scenarios. AddSpot, AddNoise and ToMat are the drawing primitives, for
// tests that build their own images.
//
// Units: image positions in px with the origin at the centre of the top-left
// pixel, x right, y down; gap positions in um (x along the flow, y from the
// stationary wall); times in s; intensities in photons (expected
// photo-electrons), converted to grey levels by the scenario's gain.
package synth
