package main

import (
	"bytes"
	"crypto/rand"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"gaptrace/profile/campaign"
)

// Time limits of the Slurm test. slurmWait bounds the whole campaign: three
// tiny runs take a few seconds, Slurm's scheduling passes add a few more,
// and a loaded 2-core machine may take ten times longer.
const (
	slurmStartTimeout = 60 * time.Second
	slurmWait         = 5 * time.Minute
	slurmPoll         = 500 * time.Millisecond
	daemonStopGrace   = 10 * time.Second
)

// slurmCluster is a one-node Slurm cluster of its own in a temporary
// folder: munged with its own key and socket, slurmctld and slurmd with
// their own slurm.conf, state and spool folders and ports.
type slurmCluster struct {
	dir, conf string
	daemons   []*exec.Cmd
}

// freePort asks the kernel for a free TCP port on the loopback.
func freePort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

// shortHostname is "hostname -s": the name slurmd takes for its node.
func shortHostname(t *testing.T) string {
	t.Helper()
	if out, err := exec.Command("hostname", "-s").Output(); err == nil && strings.TrimSpace(string(out)) != "" {
		return strings.TrimSpace(string(out))
	}
	h, err := os.Hostname()
	if err != nil {
		t.Fatal(err)
	}
	name, _, _ := strings.Cut(h, ".")
	return name
}

// startSlurm starts the cluster and registers its stop. It fails the test
// when a daemon is missing or will not start.
func startSlurm(t *testing.T) *slurmCluster {
	t.Helper()
	// The daemons live in /usr/sbin, which the PATH may lack.
	if !strings.Contains(":"+os.Getenv("PATH")+":", ":/usr/sbin:") {
		t.Setenv("PATH", os.Getenv("PATH")+":/usr/sbin")
	}
	for _, b := range []string{"munged", "slurmctld", "slurmd", "sbatch", "sinfo", "scontrol", "scancel"} {
		if _, err := exec.LookPath(b); err != nil {
			t.Fatalf("%s not found (Debian packages munge and slurm-wlm; cmd/scripts/deps.sh --test installs them): %v", b, err)
		}
	}
	dir := t.TempDir()
	c := &slurmCluster{dir: dir, conf: filepath.Join(dir, "slurm.conf")}
	for _, d := range []string{"state", "spool", "run", "log"} {
		if err := os.Mkdir(filepath.Join(dir, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	key := make([]byte, 1024)
	rand.Read(key)
	keyPath := filepath.Join(dir, "munge.key")
	if err := os.WriteFile(keyPath, key, 0o400); err != nil {
		t.Fatal(err)
	}
	socket := filepath.Join(dir, "run", "munge.socket")
	host := shortHostname(t)
	conf := fmt.Sprintf(`# A one-node cluster for gaptrace's batch test.
ClusterName=gaptrace-test
SlurmctldHost=%[1]s(127.0.0.1)
SlurmctldPort=%[2]d
SlurmdPort=%[3]d
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=%[4]s
CredType=cred/munge
StateSaveLocation=%[5]s/state
SlurmdSpoolDir=%[5]s/spool
SlurmctldPidFile=%[5]s/run/slurmctld.pid
SlurmdPidFile=%[5]s/run/slurmd.pid
SlurmctldLogFile=%[5]s/log/slurmctld.log
SlurmdLogFile=%[5]s/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SchedulerType=sched/builtin
SchedulerParameters=sched_interval=2
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
MailProg=/bin/true
ReturnToService=2
MinJobAge=600
NodeName=%[1]s NodeAddr=127.0.0.1 CPUs=%[6]d State=UNKNOWN
PartitionName=test Nodes=ALL Default=YES MaxTime=INFINITE State=UP
`, host, freePort(t), freePort(t), socket, dir, cpus())
	if err := os.WriteFile(c.conf, []byte(conf), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Setenv("SLURM_CONF", c.conf)
	t.Cleanup(c.stop)
	c.start(t, "munged", "-F", "--force", "--socket="+socket, "--key-file="+keyPath,
		"--pid-file="+filepath.Join(dir, "run", "munged.pid"), "--log-file="+filepath.Join(dir, "log", "munged.log"),
		"--seed-file="+filepath.Join(dir, "run", "munged.seed"))
	c.waitFor(t, "munged's socket", func() bool { _, err := os.Stat(socket); return err == nil })
	c.start(t, "slurmctld", "-D", "-f", c.conf)
	c.start(t, "slurmd", "-D", "-f", c.conf)
	c.waitFor(t, "the node to be idle", func() bool {
		out, err := exec.Command("sinfo", "-h", "-n", host, "-o", "%T").Output()
		return err == nil && strings.TrimSpace(string(out)) == "idle"
	})
	return c
}

// cpus is the number of CPUs slurmd is told the node has.
func cpus() int {
	out, err := exec.Command("nproc").Output()
	if n, err2 := strconv.Atoi(strings.TrimSpace(string(out))); err == nil && err2 == nil && n > 0 {
		return n
	}
	return 1
}

// start runs a daemon in the foreground, its output into log/NAME.out.
func (c *slurmCluster) start(t *testing.T, name string, args ...string) {
	t.Helper()
	out, err := os.Create(filepath.Join(c.dir, "log", name+".out"))
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(name, args...)
	cmd.Stdout, cmd.Stderr = out, out
	cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL} // none outlives the test
	if err := cmd.Start(); err != nil {
		t.Fatalf("starting %s: %v", name, err)
	}
	c.daemons = append(c.daemons, cmd)
	go func() { cmd.Wait(); out.Close() }()
}

// waitFor polls until cond holds, failing the test with the daemons' logs
// when it does not within slurmStartTimeout or a daemon has died.
func (c *slurmCluster) waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	for end := time.Now().Add(slurmStartTimeout); time.Now().Before(end); time.Sleep(slurmPoll) {
		if cond() {
			return
		}
		for _, d := range c.daemons {
			if d.ProcessState != nil {
				t.Fatalf("%s exited (%v) while waiting for %s:\n%s", filepath.Base(d.Path), d.ProcessState, what, c.logs())
			}
		}
	}
	t.Fatalf("the cluster did not start: no %s after %v:\n%s", what, slurmStartTimeout, c.logs())
}

// logs are the last lines of every daemon's log, for a failure message.
func (c *slurmCluster) logs() string {
	var b strings.Builder
	files, _ := filepath.Glob(filepath.Join(c.dir, "log", "*"))
	for _, f := range files {
		data, _ := os.ReadFile(f)
		lines := strings.Split(strings.TrimSpace(string(data)), "\n")
		fmt.Fprintf(&b, "--- %s\n%s\n", filepath.Base(f), strings.Join(lines[max(0, len(lines)-15):], "\n"))
	}
	return b.String()
}

// stop cancels what is left of the jobs and ends the daemons, last
// started first: SIGTERM, then SIGKILL after daemonStopGrace.
func (c *slurmCluster) stop() {
	exec.Command("scancel", "--user=root").Run()
	for i := len(c.daemons) - 1; i >= 0; i-- {
		d := c.daemons[i]
		d.Process.Signal(syscall.SIGTERM)
		done := make(chan struct{})
		go func() {
			for d.ProcessState == nil {
				time.Sleep(50 * time.Millisecond)
			}
			close(done)
		}()
		select {
		case <-done:
		case <-time.After(daemonStopGrace):
			d.Process.Kill()
		}
	}
}

var jobState = regexp.MustCompile(`JobState=(\S+)`)

// jobStates returns the state of each job (each task of an array) of id.
func jobStates(id string) ([]string, error) {
	out, err := exec.Command("scontrol", "show", "job", id).CombinedOutput()
	if err != nil {
		return nil, fmt.Errorf("scontrol show job %s: %v: %s", id, err, out)
	}
	var states []string
	for _, m := range jobState.FindAllStringSubmatch(string(out), -1) {
		states = append(states, m[1])
	}
	return states, nil
}

var submitted = regexp.MustCompile(`submitted array job (\d+) \((\d+) tasks\) and collect job (\d+)`)

// TestBatchSlurm runs a three-row campaign on a one-node Slurm cluster
// started for the test, as a job array of three shards and a collect job
// (--slurm --submit), and checks its campaign table against a local
// --jobs 1 run of the same manifest: the same rows, statuses and numbers.
// It needs root (the daemons run as root with their own configuration);
// it fails, not skips, when it is root and the cluster does not start.
func TestBatchSlurm(t *testing.T) {
	if uid := os.Geteuid(); uid != 0 {
		t.Skipf("the Slurm test starts munged, slurmctld and slurmd as root; this is uid %d (CI runs make test as root)", uid)
	}
	start := time.Now()
	cluster := startSlurm(t)
	t.Logf("cluster up in %v (%s)", time.Since(start).Round(10*time.Millisecond), cluster.conf)
	asCommand(t)
	dir := t.TempDir()
	manifest := writeCampaign(t, dir, []campaignRow{
		{name: "q0.5", ratePerS: 0.5, gapUM: 800}, {name: "q1", ratePerS: 1, gapUM: 800}, {name: "q1-g600", ratePerS: 1, gapUM: 600},
	})
	local, onCluster := filepath.Join(dir, "local"), filepath.Join(dir, "cluster")
	tLocal := time.Now()
	if code, errs := runGaptrace("batch", manifest, "-o", local, "--jobs", "1"); code != 0 {
		t.Fatalf("local batch: exit %d\n%s", code, errs)
	}
	t.Logf("local --jobs 1: %v", time.Since(tLocal).Round(10*time.Millisecond))

	tCluster := time.Now()
	code, errs := runGaptrace("batch", manifest, "-o", onCluster, "--slurm", "--submit", "--shards", "3",
		"--slurm-opt=--time=00:10:00")
	t.Logf("--slurm --submit: exit %d\n%s", code, errs)
	if code != 0 {
		t.Fatalf("--slurm --submit failed:\n%s", cluster.logs())
	}
	m := submitted.FindStringSubmatch(errs)
	if m == nil || m[2] != "3" {
		t.Fatalf("no array of 3 tasks and collect job in the output")
	}
	arrayID, collectID := m[1], m[3]
	var states []string
	for end := time.Now().Add(slurmWait); ; time.Sleep(slurmPoll) {
		var err error
		if states, err = jobStates(collectID); err != nil {
			t.Fatal(err)
		}
		if len(states) == 1 && states[0] != "PENDING" && states[0] != "RUNNING" && states[0] != "CONFIGURING" {
			break
		}
		if time.Now().After(end) {
			out, _ := exec.Command("squeue").CombinedOutput()
			t.Fatalf("the campaign did not end within %v: collect job %v\n%s\n%s", slurmWait, states, out, cluster.logs())
		}
	}
	t.Logf("array and collect on the cluster: %v", time.Since(tCluster).Round(10*time.Millisecond))
	arrayStates, err := jobStates(arrayID)
	if err != nil {
		t.Fatal(err)
	}
	if len(arrayStates) != 3 || strings.Count(strings.Join(arrayStates, " "), "COMPLETED") != 3 || states[0] != "COMPLETED" {
		t.Errorf("array tasks %v and collect job %s, want 3 tasks and the collect COMPLETED", arrayStates, states[0])
	}
	slurmDir := filepath.Join(onCluster, campaign.SlurmDir)
	for k := 0; k < 3; k++ {
		p := filepath.Join(slurmDir, fmt.Sprintf("array-%s_%d.out", arrayID, k))
		b, err := os.ReadFile(p)
		if err != nil || !strings.Contains(string(b), fmt.Sprintf("(shard %d/3)", k)) {
			t.Errorf("array task %d output %s: %v\n%s", k, p, err, b)
		}
	}
	collectOut, err := os.ReadFile(filepath.Join(slurmDir, "collect-"+collectID+".out"))
	if err != nil || !strings.Contains(string(collectOut), "3 rows analysed, 0 failed") {
		t.Errorf("collect job output: %v\n%s", err, collectOut)
	}

	want := readTable(t, filepath.Join(local, campaign.TableFile))
	got := readTable(t, filepath.Join(onCluster, campaign.TableFile))
	if len(got) != len(want) || len(want) != 4 {
		t.Fatalf("cluster table has %d lines, local %d, want 4 (header and 3 shear phases)", len(got), len(want))
	}
	for i := range want {
		if !equalStrings(got[i], want[i]) {
			t.Errorf("line %d of campaign.csv differs:\ncluster %q\nlocal   %q", i+1, got[i], want[i])
		}
	}
	for _, r := range got[1:] {
		if r[4] != "ok" { // name, gap_um, repeat, phase, status
			t.Errorf("row %s: status %q", r[0], r[4])
		}
	}
	page, err := os.ReadFile(filepath.Join(onCluster, campaign.PageFile))
	if err != nil || !bytes.Contains(page, []byte("data:image/png;base64,")) {
		t.Errorf("the collect job wrote no page with figures: %v", err)
	}
}

func equalStrings(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
