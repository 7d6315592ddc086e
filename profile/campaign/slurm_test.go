package campaign

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestSlurmScripts checks the job scripts' #SBATCH lines and command, and
// that bash (a reference shell, as an outside parser) reads them.
func TestSlurmScripts(t *testing.T) {
	j := &SlurmJob{Executable: "/opt/gaptrace/bin/gaptrace", Manifest: "/lab/peo8/manifest.csv", OutRoot: "/scratch/peo8",
		Shards: 3, Name: "gaptrace-peo8", Options: []string{"--partition=short", "--time=01:00:00"}}
	if err := j.Check(); err != nil {
		t.Fatal(err)
	}
	array, collect := j.ArrayScript(), j.CollectScript()
	for _, want := range []string{
		"#!/bin/bash\n", "#SBATCH --job-name=gaptrace-peo8\n", "#SBATCH --array=0-2\n",
		"#SBATCH --output=/scratch/peo8/slurm/array-%A_%a.out\n", "#SBATCH --partition=short\n", "#SBATCH --time=01:00:00\n",
		`exec '/opt/gaptrace/bin/gaptrace' batch '/lab/peo8/manifest.csv' -o '/scratch/peo8' --shard "${SLURM_ARRAY_TASK_ID:?not a Slurm array task}/3" --jobs 1` + "\n",
	} {
		if !strings.Contains(array, want) {
			t.Errorf("array.sbatch lacks %q:\n%s", want, array)
		}
	}
	for _, want := range []string{
		"#SBATCH --job-name=gaptrace-peo8-collect\n", "#SBATCH --output=/scratch/peo8/slurm/collect-%j.out\n",
		"#SBATCH --partition=short\n", "exec '/opt/gaptrace/bin/gaptrace' batch '/lab/peo8/manifest.csv' -o '/scratch/peo8' --collect\n",
	} {
		if !strings.Contains(collect, want) {
			t.Errorf("collect.sbatch lacks %q:\n%s", want, collect)
		}
	}
	if strings.Contains(collect, "--array") || strings.Contains(collect, "--dependency") {
		t.Errorf("collect.sbatch sets its own array or dependency:\n%s", collect)
	}
	// #SBATCH lines must come before the first command (sbatch stops
	// reading them there).
	for name, s := range map[string]string{"array": array, "collect": collect} {
		seenCmd := false
		for _, l := range strings.Split(s, "\n") {
			switch {
			case strings.HasPrefix(l, "#SBATCH") && seenCmd:
				t.Errorf("%s: #SBATCH line after a command: %q", name, l)
			case l != "" && !strings.HasPrefix(l, "#"):
				seenCmd = true
			}
		}
	}
	cmds := j.SubmitCommands()
	if !strings.Contains(cmds, "sbatch --parsable '/scratch/peo8/slurm/array.sbatch'") ||
		!strings.Contains(cmds, "sbatch --dependency=afterany:${array%%;*} '/scratch/peo8/slurm/collect.sbatch'") {
		t.Errorf("submit commands:\n%s", cmds)
	}
	bash, err := exec.LookPath("bash")
	if err != nil {
		t.Skipf("no bash to parse the scripts: %v", err)
	}
	dir := t.TempDir()
	for name, s := range map[string]string{"array.sbatch": array, "collect.sbatch": collect, "submit.sh": cmds} {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(s), 0o644)
		if out, err := exec.Command(bash, "-n", p).CombinedOutput(); err != nil {
			t.Errorf("bash -n %s: %v\n%s", name, err, out)
		}
	}
	// The array task without Slurm's variable stops with a message.
	out, err := exec.Command(bash, filepath.Join(dir, "array.sbatch")).CombinedOutput()
	if err == nil || !strings.Contains(string(out), "not a Slurm array task") {
		t.Errorf("array.sbatch outside Slurm: %v, %s", err, out)
	}
}

func TestSlurmCheck(t *testing.T) {
	good := SlurmJob{Executable: "/bin/g", Manifest: "/m.csv", OutRoot: "/o", Shards: 2, Name: "n"}
	cases := []struct {
		name   string
		change func(*SlurmJob)
		want   string
	}{
		{"relative executable", func(j *SlurmJob) { j.Executable = "bin/g" }, "absolute"},
		{"space in OUTROOT", func(j *SlurmJob) { j.OutRoot = "/my results" }, "space"},
		{"percent in OUTROOT", func(j *SlurmJob) { j.OutRoot = "/o%j" }, "%"},
		{"quote in manifest", func(j *SlurmJob) { j.Manifest = "/it's.csv" }, "quote"},
		{"no shards", func(j *SlurmJob) { j.Shards = 0 }, "shards"},
		{"two-word name", func(j *SlurmJob) { j.Name = "a b" }, "one word"},
		{"not an option", func(j *SlurmJob) { j.Options = []string{"partition=short"} }, "partition=short"},
		{"line break", func(j *SlurmJob) { j.Options = []string{"--time=1\nrm -rf /"} }, "sbatch option"},
		{"our array", func(j *SlurmJob) { j.Options = []string{"--array=1-4"} }, "set by gaptrace"},
		{"our dependency", func(j *SlurmJob) { j.Options = []string{"--dependency=afterok:1"} }, "set by gaptrace"},
	}
	for _, c := range cases {
		j := good
		c.change(&j)
		if err := j.Check(); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want an error mentioning %s", c.name, err, c.want)
		}
	}
	if err := good.Check(); err != nil {
		t.Errorf("a good job: %v", err)
	}
	for _, c := range []struct {
		out, id string
		ok      bool
	}{{"1234\n", "1234", true}, {"77;hpc\n", "77", true}, {"Submitted batch job 5\n", "", false}, {"", "", false}} {
		id, err := ParseJobID(c.out)
		if (err == nil) != c.ok || id != c.id {
			t.Errorf("ParseJobID(%q) = %q, %v", c.out, id, err)
		}
	}
}
