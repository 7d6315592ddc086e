package campaign

import (
	"fmt"
	"path/filepath"
	"strconv"
	"strings"
)

// DefaultMaxShards is the most shards --slurm makes by default: Slurm's
// default MaxArraySize of 1001 allows array indices 0 to 1000 (slurm.conf(5),
// Slurm 22.05, "MaxArraySize"); a site may allow fewer or more.
const DefaultMaxShards = 1000

// Slurm file names under OUTROOT/slurm.
const (
	ArrayScript   = "array.sbatch"
	CollectScript = "collect.sbatch"
)

// SlurmJob is a campaign run as a Slurm job array: task K of Shards runs
// the rows of shard K/Shards with one row at a time, and a collect job,
// submitted to start after every task has ended (afterany), writes the
// campaign table and page.
type SlurmJob struct {
	Executable string   // absolute path of gaptrace on the cluster's shared file system
	Manifest   string   // absolute path of the manifest
	OutRoot    string   // absolute path of OUTROOT
	Shards     int      // number of array tasks
	Name       string   // job name; the collect job's is Name + "-collect"
	Options    []string // more #SBATCH options, e.g. "--partition=short", "--time=02:00:00"
}

// Check reports what makes the job impossible to write: relative paths,
// paths that an #SBATCH line cannot carry, an option that is not one.
func (j *SlurmJob) Check() error {
	for _, p := range []struct{ what, v string }{{"executable", j.Executable}, {"manifest", j.Manifest}, {"OUTROOT", j.OutRoot}} {
		if !filepath.IsAbs(p.v) {
			return fmt.Errorf("slurm: %s %q is not an absolute path", p.what, p.v)
		}
		if strings.ContainsAny(p.v, "\n\r'") {
			return fmt.Errorf("slurm: %s %q holds a quote or a line break", p.what, p.v)
		}
	}
	// #SBATCH --output=PATH is split at white space and expands %-patterns.
	if strings.ContainsAny(j.OutRoot, " \t%") {
		return fmt.Errorf("slurm: OUTROOT %q holds a space or %%, which an #SBATCH --output line cannot carry", j.OutRoot)
	}
	if j.Shards < 1 {
		return fmt.Errorf("slurm: %d shards: want at least 1", j.Shards)
	}
	if j.Name == "" || strings.ContainsAny(j.Name, " \t\n\r'\"") {
		return fmt.Errorf("slurm: job name %q: want one word", j.Name)
	}
	for _, o := range j.Options {
		if !strings.HasPrefix(o, "-") || strings.ContainsAny(o, "\n\r") {
			return fmt.Errorf("slurm: option %q: want one sbatch option such as --partition=short", o)
		}
		if strings.HasPrefix(o, "--array") || strings.HasPrefix(o, "-a") || strings.HasPrefix(o, "--dependency") || strings.HasPrefix(o, "-d") {
			return fmt.Errorf("slurm: option %q is set by gaptrace itself", o)
		}
	}
	return nil
}

// quote makes s one word for bash, in single quotes.
func quote(s string) string { return "'" + s + "'" }

// header is the #SBATCH block shared by both scripts.
func (j *SlurmJob) header(b *strings.Builder, what, name, output string) {
	fmt.Fprintf(b, "#!/bin/bash\n# %s\n# Written by gaptrace batch --slurm; submit with the commands it printed.\n", what)
	fmt.Fprintf(b, "#SBATCH --job-name=%s\n", name)
	fmt.Fprintf(b, "#SBATCH --output=%s\n", filepath.Join(j.OutRoot, SlurmDir, output))
	for _, o := range j.Options {
		fmt.Fprintf(b, "#SBATCH %s\n", o)
	}
}

// ArrayScript is array.sbatch: one array task per shard.
func (j *SlurmJob) ArrayScript() string {
	var b strings.Builder
	j.header(&b, fmt.Sprintf("Campaign %s: array task K of %d analyses the manifest rows whose index is K modulo %d.",
		filepath.Base(j.OutRoot), j.Shards, j.Shards), j.Name, "array-%A_%a.out")
	fmt.Fprintf(&b, "#SBATCH --array=0-%d\n", j.Shards-1)
	b.WriteString("set -eu\n")
	fmt.Fprintf(&b, "exec %s batch %s -o %s --shard \"${SLURM_ARRAY_TASK_ID:?not a Slurm array task}/%d\" --jobs 1\n",
		quote(j.Executable), quote(j.Manifest), quote(j.OutRoot), j.Shards)
	return b.String()
}

// CollectScript is collect.sbatch: the campaign table and page, once the
// array has ended (the dependency is given at submission, when the array's
// job id is known).
func (j *SlurmJob) CollectScript() string {
	var b strings.Builder
	j.header(&b, fmt.Sprintf("Campaign %s: the campaign table and page, after every array task has ended.",
		filepath.Base(j.OutRoot)), j.Name+"-collect", "collect-%j.out")
	b.WriteString("set -eu\n")
	fmt.Fprintf(&b, "exec %s batch %s -o %s --collect\n", quote(j.Executable), quote(j.Manifest), quote(j.OutRoot))
	return b.String()
}

// SubmitCommands are the shell commands that submit the array, then the
// collect job after it.
func (j *SlurmJob) SubmitCommands() string {
	dir := filepath.Join(j.OutRoot, SlurmDir)
	return fmt.Sprintf("array=$(sbatch --parsable %s) &&\nsbatch --dependency=afterany:${array%%%%;*} %s\n",
		quote(filepath.Join(dir, ArrayScript)), quote(filepath.Join(dir, CollectScript)))
}

// ParseJobID reads the job id from the output of sbatch --parsable:
// "ID" or "ID;CLUSTER".
func ParseJobID(out string) (string, error) {
	id, _, _ := strings.Cut(strings.TrimSpace(out), ";")
	if _, err := strconv.ParseUint(id, 10, 64); err != nil {
		return "", fmt.Errorf("sbatch printed %q, not a job id", strings.TrimSpace(out))
	}
	return id, nil
}
