package report_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/profile/report"
	"gaptrace/profile/report/internal/scenario"
	"gaptrace/profile/summary"
)

// SHA-256 test vectors of FIPS 180-2 (2002), appendix B.1 ("abc"), and the
// well-known digest of the empty message.
const (
	sha256ABC   = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	sha256Empty = "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
)

func TestDigestInput(t *testing.T) {
	dir := t.TempDir()
	video := filepath.Join(dir, "run.avi")
	os.WriteFile(video, []byte("abc"), 0o644)
	d, err := report.DigestInput(video)
	if err != nil {
		t.Fatal(err)
	}
	if d.SHA256 != sha256ABC || d.Bytes != 3 || d.Files != 1 {
		t.Errorf("digest of a 3-byte file \"abc\": %+v, want SHA-256 %s", d, sha256ABC)
	}

	frames := filepath.Join(dir, "frames")
	os.Mkdir(frames, 0o755)
	os.WriteFile(filepath.Join(frames, "f10.png"), []byte("abc"), 0o644)
	os.WriteFile(filepath.Join(frames, "f2.png"), nil, 0o644)
	os.WriteFile(filepath.Join(frames, "notes.txt"), []byte("not a frame"), 0o644)
	byDir, err := report.DigestInput(frames)
	if err != nil {
		t.Fatal(err)
	}
	byGlob, err := report.DigestInput(filepath.Join(frames, "f*.png"))
	if err != nil {
		t.Fatal(err)
	}
	if *byDir != *byGlob || byDir.Files != 2 || byDir.Bytes != 3 {
		t.Errorf("folder %+v and glob %+v differ or count wrong", byDir, byGlob)
	}
	// The recipe the README gives, run by coreutils' sha256sum as an
	// outside oracle: the digest of the list of the frames' digests.
	if _, err := exec.LookPath("sha256sum"); err != nil {
		t.Skipf("sha256sum not found: %v", err)
	}
	cmd := exec.Command("sh", "-c", "LC_ALL=C sha256sum *.png | sha256sum")
	cmd.Dir = frames
	out, err := cmd.Output()
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Fields(string(out))[0]; got != byDir.SHA256 {
		t.Errorf("sha256sum gives %s for the frames, DigestInput %s", got, byDir.SHA256)
	}
	list := sha256ABC + "  f10.png\n" + sha256Empty + "  f2.png\n"
	cmd = exec.Command("sha256sum")
	cmd.Stdin = strings.NewReader(list)
	out, _ = cmd.Output()
	if got := strings.Fields(string(out))[0]; got != byDir.SHA256 {
		t.Errorf("the digest of the list %q is %s, DigestInput %s", list, got, byDir.SHA256)
	}
	if _, err := report.DigestInput(filepath.Join(dir, "missing.avi")); err == nil {
		t.Errorf("no error for a missing input")
	}
}

// Slip a wall does not show is written as an upper limit, 3 standard
// uncertainties above the measured value (above zero when that is
// negative), rounded up; slip resolved but below 2 % of the wall speed is
// said to be so. These are the contract's verdict rules in words.
func TestUpperLimits(t *testing.T) {
	cases := []struct {
		name            string
		slip, err, blen float64
		want            string
	}{
		{"not detected", 0.4, 0.3, 0.16, "No slip detected at the stationary wall: below 1.3 µm/s (3 standard uncertainties " +
			"above the measured 0.40 ± 0.30 µm/s); Navier slip length below 0.52 µm."},
		{"negative, not detected", -0.2, 0.3, -0.08, "No slip detected at the stationary wall: below 0.90 µm/s (3 standard " +
			"uncertainties above zero; measured −0.20 ± 0.30 µm/s); Navier slip length below 0.36 µm."},
		{"resolved but small", 10, 2, 4, "Slip at the stationary wall of 10.0 ± 2.0 µm/s, 0.83 ± 0.17 % of the wall speed: " +
			"resolved, but below the 2 % of the wall speed that counts as wall slip"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := scenario.Summary()
			sp := &s.ShearPhases[0]
			sp.SlipStationaryUMPerS, sp.SlipStationaryErrUMPerS = summary.Num(c.slip), summary.Num(c.err)
			sp.SlipLengthStationaryUM, sp.SlipLengthStationaryErrUM = summary.Num(c.blen), 0.1
			_, html := writeReport(t, &report.Data{Summary: s})
			if !strings.Contains(html, c.want) {
				i := strings.Index(html, "stationary wall:")
				t.Errorf("report lacks %q; has %q", c.want, html[max(0, i-40):min(len(html), i+220)])
			}
		})
	}
}

func TestVerdictLines(t *testing.T) {
	got := report.VerdictLines(scenario.Summary())
	want := []string{
		"wall_slip+banded: Shear phase 1 (0.5 – 2.5 s, analysed over 1.5 – 2.5 s): the sample slipped at the walls and split into 2 shear bands.",
		"moving (bulk): After the stop at 2.5 s (observed for 3.5 s): the sample failed along a plane inside the gap at 520 µm.",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("VerdictLines:\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
}
