// Package campaign runs the bookkeeping of a test campaign: many recordings
// analysed one by one into folders under one root, OUTROOT, then compared.
//
// A manifest (CSV with a header: name,input,experiment, optional log, and
// free columns such as gap_um or temperature_c) lists the recordings
// (ReadManifest). Each row's analysis goes into OUTROOT/NAME exactly as
// "gaptrace run" writes it; a row is complete exactly when
// OUTROOT/NAME/summary.json exists (run writes it last, atomically), so a
// killed batch is resumed by running the rows that are not (Layout). The
// campaign table (Collect) has one record per shear phase of every row,
// with the summaries' numbers under their summary.json names, and the
// campaign page (Write) the figures across the campaign: slip at each wall
// against rate or wall stress, slip fraction per gap, bulk against nominal
// rate. SlurmScripts writes the job scripts that run the shards of a
// campaign as a Slurm job array.
package campaign
