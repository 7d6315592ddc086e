package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"syscall"
	"time"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile/campaign"
)

func init() {
	commands["batch"] = command{
		summary: "a campaign: one run per manifest row, then campaign.csv and campaign.html; --slurm for a cluster",
		run:     runBatch,
	}
}

// childStopGrace is how long a row's run has, after the batch is
// interrupted, to end on SIGTERM before it is killed: enough to remove its
// temporary files, short against a Slurm job's kill wait (30 s by default).
const childStopGrace = 5 * time.Second

// stringList collects a repeated string flag.
type stringList []string

func (s *stringList) String() string     { return strings.Join(*s, " ") }
func (s *stringList) Set(v string) error { *s = append(*s, v); return nil }

// batchOptions are the flags of batch.
type batchOptions struct {
	outRoot, shard           string
	jobs, shards             int
	force, collect, progress bool
	slurm, submit            bool
	slurmName                string
	slurmOpts                stringList
	shardK, shardN           int
	manifestPath             string
	executable               string
	stderr                   io.Writer
	progressLine             *batchProgress
	mu                       sync.Mutex
	done, failed, skipped    int
}

func runBatch(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("batch", "MANIFEST.csv", stderr)
	o := &batchOptions{stderr: stderr}
	fs.StringVar(&o.outRoot, "o", "", "campaign folder OUTROOT: one folder per manifest row, campaign.csv, campaign.html")
	fs.IntVar(&o.jobs, "jobs", 1, "rows analysed at once on this machine (each run already uses every core)")
	fs.BoolVar(&o.force, "force", false, "analyse complete rows again, replacing their results")
	fs.StringVar(&o.shard, "shard", "", "K/N: analyse only the rows whose index (from 0) is K modulo N, and leave the table to --collect")
	fs.BoolVar(&o.collect, "collect", false, "only rebuild campaign.csv and campaign.html from the row folders (gaptrace batch --collect OUTROOT)")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	fs.BoolVar(&o.slurm, "slurm", false, "write OUTROOT/slurm/array.sbatch and collect.sbatch for a Slurm cluster and print the sbatch commands")
	fs.BoolVar(&o.submit, "submit", false, "with --slurm: also submit the jobs")
	fs.IntVar(&o.shards, "shards", 0, fmt.Sprintf("with --slurm: array tasks (0: one per row, at most %d)", campaign.DefaultMaxShards))
	fs.StringVar(&o.slurmName, "slurm-name", "", "with --slurm: job name (default gaptrace-BASENAME of OUTROOT)")
	fs.Var(&o.slurmOpts, "slurm-opt", "with --slurm: one more #SBATCH option for both jobs, e.g. --slurm-opt=--partition=short; repeat for more")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if o.collect {
		return o.runCollect(fs.Args())
	}
	if fs.NArg() != 1 {
		return badInputf("batch needs one MANIFEST.csv, got %d arguments", fs.NArg())
	}
	if o.outRoot == "" {
		return badInputf("no campaign folder: give -o OUTROOT")
	}
	if o.jobs < 1 {
		return badInputf("--jobs %d: want at least 1", o.jobs)
	}
	if o.submit && !o.slurm {
		return badInputf("--submit goes with --slurm")
	}
	if !o.slurm && (o.shards != 0 || o.slurmName != "" || len(o.slurmOpts) > 0) {
		return badInputf("--shards, --slurm-name and --slurm-opt go with --slurm")
	}
	o.shardK, o.shardN = 0, 1
	if o.shard != "" {
		var err error
		if o.shardK, o.shardN, err = campaign.ParseShard(o.shard); err != nil {
			return badInputf("--shard: %v", err)
		}
		if o.slurm {
			return badInputf("--shard and --slurm: the Slurm array makes its own shards (--shards N)")
		}
	}
	o.manifestPath = fs.Arg(0)
	m, err := campaign.ReadManifest(o.manifestPath, campaign.Options{CheckFiles: true})
	if err != nil {
		return badInput(err)
	}
	l := campaign.Layout{Root: o.outRoot}
	if err := l.Prepare(); err != nil {
		return err
	}
	if err := writeManifestCopy(m, l); err != nil {
		return err
	}
	if o.executable, err = executable(); err != nil {
		return err
	}
	if o.slurm {
		return o.runSlurm(m, l)
	}
	return o.runRows(ctx, m, l)
}

// executable is the absolute path of this program, which runs each row.
func executable() (string, error) {
	exe, err := os.Executable()
	if err != nil {
		return "", fmt.Errorf("batch: cannot find the gaptrace executable: %w", err)
	}
	if r, err := filepath.EvalSymlinks(exe); err == nil {
		exe = r
	}
	return exe, nil
}

// writeManifestCopy writes OUTROOT/manifest.csv with absolute paths.
func writeManifestCopy(m *campaign.Manifest, l campaign.Layout) error {
	var b bytes.Buffer
	if err := m.WriteResolved(&b); err != nil {
		return err
	}
	return atomicfile.WriteBytes(filepath.Join(l.Root, campaign.ManifestCopy), b.Bytes())
}

// runCollect rebuilds the table and page: "batch --collect OUTROOT", or
// "batch MANIFEST -o OUTROOT --collect".
func (o *batchOptions) runCollect(args []string) error {
	if o.slurm || o.submit || o.shard != "" || o.force {
		return badInputf("--collect only rebuilds the table and page: it takes no --slurm, --submit, --shard or --force")
	}
	var manifest string
	switch {
	case o.outRoot == "" && len(args) == 1:
		o.outRoot = args[0]
	case o.outRoot != "" && len(args) <= 1:
		if len(args) == 1 {
			manifest = args[0]
		}
	default:
		return badInputf("batch --collect takes OUTROOT, or MANIFEST.csv -o OUTROOT")
	}
	if manifest == "" {
		manifest = filepath.Join(o.outRoot, campaign.ManifestCopy)
		if _, err := os.Stat(manifest); err != nil {
			return badInputf("--collect: no %s in %s: give the manifest too (batch MANIFEST.csv -o OUTROOT --collect)", campaign.ManifestCopy, o.outRoot)
		}
	}
	m, err := campaign.ReadManifest(manifest, campaign.Options{})
	if err != nil {
		return badInput(err)
	}
	return o.writeTable(m, campaign.Layout{Root: o.outRoot}, true)
}

// writeTable writes campaign.csv and campaign.html and reports the count
// of rows in each state; with strict, rows without numbers are an error.
func (o *batchOptions) writeTable(m *campaign.Manifest, l campaign.Layout, strict bool) error {
	t, err := campaign.Write(m, l)
	if err != nil {
		return err
	}
	ok, failed, incomplete, notRun := t.Counts()
	fmt.Fprintf(o.stderr, "batch: %s and %s: %d rows analysed, %d failed, %d incomplete, %d not run\n",
		filepath.Join(l.Root, campaign.TableFile), campaign.PageFile, ok, failed, incomplete, notRun)
	if strict && ok < len(m.Rows) {
		return fmt.Errorf("%d of %d rows have no results (see the status column of %s)", len(m.Rows)-ok, len(m.Rows), campaign.TableFile)
	}
	return nil
}

// runRows analyses the rows of the shard, --jobs at a time, then writes
// the table (not for a shard: the shards' collect does). When ctx is
// cancelled (SIGINT, SIGTERM: a Slurm job's end) the rows running are
// stopped and left incomplete, for the next batch to clear and rerun.
func (o *batchOptions) runRows(ctx context.Context, m *campaign.Manifest, l campaign.Layout) error {
	var todo []*campaign.Row
	complete := 0
	for i := range m.Rows {
		r := &m.Rows[i]
		if !r.InShard(o.shardK, o.shardN) {
			continue
		}
		if !o.force && l.StatusOf(r.Name).State == campaign.Complete {
			complete++
			continue
		}
		todo = append(todo, r)
	}
	where := ""
	if o.shard != "" {
		where = fmt.Sprintf(" (shard %d/%d)", o.shardK, o.shardN)
	}
	fmt.Fprintf(o.stderr, "batch: %d rows to analyse%s, %d complete already (kept; --force analyses them again), %d at once\n",
		len(todo), where, complete, min(o.jobs, max(len(todo), 1)))
	o.progressLine = newBatchProgress(o.stderr, o.progress, len(todo), o.jobs)
	queue := make(chan *campaign.Row)
	var wg sync.WaitGroup
	for w := 0; w < min(o.jobs, len(todo)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := range queue {
				o.runRow(ctx, l, r)
			}
		}()
	}
	for _, r := range todo {
		if ctx.Err() != nil {
			break
		}
		queue <- r
	}
	close(queue)
	wg.Wait()
	o.progressLine.end()
	interrupted := ctx.Err() != nil
	if o.shard == "" && !interrupted {
		if err := o.writeTable(m, l, false); err != nil {
			return err
		}
	}
	switch {
	case interrupted:
		fmt.Fprintf(o.stderr, "batch: stopped with %d of %d rows done; run the same command again to resume\n", o.done, len(todo))
		return ctx.Err()
	case o.failed > 0:
		return fmt.Errorf("%d of %d rows failed (their reasons are in %s and %s)", o.failed, len(todo),
			campaign.TableFile, filepath.Join(l.Root, campaign.LogDir))
	}
	return nil
}

// runRow analyses one row in a child process: gaptrace run into
// OUTROOT/NAME, its stderr into OUTROOT/logs/NAME.log.
func (o *batchOptions) runRow(ctx context.Context, l campaign.Layout, r *campaign.Row) {
	if ctx.Err() != nil {
		return
	}
	lock, err := l.Lock(r.Name)
	if errors.Is(err, campaign.ErrBusy) {
		o.result(r.Name, "skipped: "+err.Error(), 0, &o.skipped)
		return
	}
	if err != nil {
		o.result(r.Name, "failed: "+err.Error(), 0, &o.failed)
		return
	}
	defer lock.Close()
	// Another batch may have finished the row between our look and the lock.
	if !o.force && l.StatusOf(r.Name).State == campaign.Complete {
		o.result(r.Name, "complete (by another batch)", 0, &o.skipped)
		return
	}
	had, err := l.Clear(r.Name)
	if err != nil {
		o.result(r.Name, "failed: "+err.Error(), 0, &o.failed)
		return
	}
	if had {
		why := "clearing the incomplete folder an interrupted run left"
		if o.force {
			why = "clearing its earlier results (--force)"
		}
		o.progressLine.line(fmt.Sprintf("batch: %s: %s", r.Name, why))
	}
	logf, err := os.Create(l.LogPath(r.Name))
	if err != nil {
		o.result(r.Name, "failed: "+err.Error(), 0, &o.failed)
		return
	}
	defer logf.Close()
	start := time.Now()
	o.progressLine.started()
	err = runChild(ctx, o.executable, r.RunArgs(l.RowDir(r.Name)), logf, lock)
	el := time.Since(start)
	if ctx.Err() != nil {
		o.result(r.Name, "interrupted", el, nil)
		return
	}
	if err == nil {
		if _, serr := os.Stat(filepath.Join(l.RowDir(r.Name), campaign.SummaryFile)); serr != nil {
			err = fmt.Errorf("run ended without writing %s", campaign.SummaryFile)
		}
	}
	if err != nil {
		reason := campaign.FailureReason(l.LogPath(r.Name), err.Error())
		if rerr := l.RecordFailure(r.Name, reason); rerr != nil {
			reason += "; " + rerr.Error()
		}
		o.result(r.Name, "failed: "+reason, el, &o.failed)
		return
	}
	o.result(r.Name, "ok", el, nil)
}

// runChild runs this executable with args, its stdout and stderr into log,
// handing it the row's lock so that the lock lasts as long as the run. On
// Linux the child is killed when the batch dies, so a killed batch leaves
// no run behind; an interrupted batch stops its children with SIGTERM.
func runChild(ctx context.Context, exe string, args []string, log io.Writer, lock *os.File) error {
	cmd := exec.CommandContext(ctx, exe, args...)
	cmd.Stdout, cmd.Stderr = log, log
	cmd.ExtraFiles = []*os.File{lock}
	cmd.SysProcAttr = childProcAttr()
	cmd.Cancel = func() error { return cmd.Process.Signal(syscall.SIGTERM) }
	cmd.WaitDelay = childStopGrace
	// The parent-death signal follows the thread that started the child:
	// keep that thread alive until the child has ended.
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	return cmd.Run()
}

// result reports a finished row and counts it.
func (o *batchOptions) result(name, what string, el time.Duration, count *int) {
	o.mu.Lock()
	if count != nil {
		*count++
	}
	if count != &o.skipped {
		o.done++
	}
	o.mu.Unlock()
	took := ""
	if el > 0 {
		took = fmt.Sprintf(" (%v)", el.Round(100*time.Millisecond))
	}
	o.progressLine.finished(fmt.Sprintf("batch: %s: %s%s", name, what, took), el, count == &o.failed)
}

// runSlurm writes the job scripts, prints the commands that submit them,
// and with --submit runs them.
func (o *batchOptions) runSlurm(m *campaign.Manifest, l campaign.Layout) error {
	abs := func(p string) string {
		a, err := filepath.Abs(p)
		if err != nil {
			return p
		}
		return a
	}
	shards := o.shards
	if shards == 0 {
		shards = min(len(m.Rows), campaign.DefaultMaxShards)
	}
	if shards > len(m.Rows) {
		return badInputf("--shards %d: the manifest has only %d rows", shards, len(m.Rows))
	}
	root := abs(l.Root)
	name := o.slurmName
	if name == "" {
		name = "gaptrace-" + filepath.Base(root)
	}
	j := &campaign.SlurmJob{Executable: o.executable, Manifest: abs(o.manifestPath), OutRoot: root,
		Shards: shards, Name: name, Options: o.slurmOpts}
	if err := j.Check(); err != nil {
		return badInput(err)
	}
	dir := filepath.Join(root, campaign.SlurmDir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	arrayPath, collectPath := filepath.Join(dir, campaign.ArrayScript), filepath.Join(dir, campaign.CollectScript)
	for _, f := range []struct{ path, body string }{
		{arrayPath, j.ArrayScript()}, {collectPath, j.CollectScript()},
		{filepath.Join(dir, "submit.sh"), "#!/bin/bash\n# Submits the campaign's array, then its collect job after it.\nset -eu\n" + j.SubmitCommands()},
	} {
		if err := atomicfile.WriteBytes(f.path, []byte(f.body)); err != nil {
			return err
		}
	}
	fmt.Fprintf(o.stderr, "batch: wrote %s and %s (%d array tasks); submit with:\n%s", arrayPath, collectPath, shards, j.SubmitCommands())
	if !o.submit {
		return nil
	}
	arrayID, err := sbatch("--parsable", arrayPath)
	if err != nil {
		return err
	}
	collectID, err := sbatch("--parsable", "--dependency=afterany:"+arrayID, collectPath)
	if err != nil {
		return fmt.Errorf("%w (the array job %s is submitted; scancel %s to withdraw it)", err, arrayID, arrayID)
	}
	fmt.Fprintf(o.stderr, "batch: submitted array job %s (%d tasks) and collect job %s; their output goes to %s\n", arrayID, shards, collectID, dir)
	return nil
}

// sbatch runs sbatch with args and returns the job id it prints.
func sbatch(args ...string) (string, error) {
	cmd := exec.Command("sbatch", args...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		return "", fmt.Errorf("sbatch %s: %v: %s", strings.Join(args, " "), err, strings.TrimSpace(errb.String()))
	}
	return campaign.ParseJobID(out.String())
}
