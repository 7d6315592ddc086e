package synth

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib/experiment"
	"gaptrace/track/tracks"
)

// small returns a quick scenario for the writers: 160x120 px, a 160 um gap
// at 1.6 um/px, 6 frames.
func small(t *testing.T) *Scenario {
	s := mustBuiltin(t, "slip", 8)
	s.WidthPx, s.HeightPx, s.Frames = 160, 120, 6
	s.Geometry.GapUM, s.UMPerPx, s.GapCentreYPx = 160, 1.6, 0
	s.Tracers = 30
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	return s
}

// readFrames reads every frame of a video as grey bytes.
func readFrames(t *testing.T, path string) [][]byte {
	v, err := gocv.VideoCaptureFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer v.Close()
	m, g := gocv.NewMat(), gocv.NewMat()
	defer m.Close()
	defer g.Close()
	var out [][]byte
	for v.Read(&m) && !m.Empty() {
		if m.Channels() == 3 {
			gocv.CvtColor(m, &g, gocv.ColorBGRToGray)
		} else {
			m.CopyTo(&g)
		}
		out = append(out, g.ToBytes())
	}
	return out
}

// rendered returns the frames as the renderer makes them.
func rendered(t *testing.T, s *Scenario) [][]byte {
	r, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	m := gocv.NewMat()
	defer m.Close()
	var out [][]byte
	for f := range s.Frames {
		if err := r.Render(f, &m); err != nil {
			t.Fatal(err)
		}
		out = append(out, m.ToBytes())
	}
	return out
}

// mjpegMeanTol is the mean absolute grey-level error allowed for the lossy
// MJPEG video. gocv 0.31 cannot set the writer's quality, and on these
// frames (noise sd about 5.6 grey levels) OpenCV's default loses 2.9 grey
// levels on average (measured here); 4 leaves room for other encoder builds.
const mjpegMeanTol = 4.0

func TestWriteVideo(t *testing.T) {
	s := small(t)
	want := rendered(t, s)
	for _, format := range []string{FormatFFV1, FormatFFV1MKV, FormatMJPEG} {
		t.Run(format, func(t *testing.T) {
			dir := t.TempDir()
			tr, err := s.Write(dir, Output{Format: format})
			if err != nil {
				t.Fatal(err)
			}
			got := readFrames(t, tr.Summary.Input.Path)
			if len(got) != s.Frames {
				t.Fatalf("read back %d frames of %d", len(got), s.Frames)
			}
			for f := range got {
				if len(got[f]) != len(want[f]) {
					t.Fatalf("frame %d: %d bytes, want %d", f, len(got[f]), len(want[f]))
				}
				sum, diff := 0.0, 0
				for i := range got[f] {
					d := int(got[f][i]) - int(want[f][i])
					sum += float64(max(d, -d))
					if d != 0 {
						diff++
					}
				}
				mean := sum / float64(len(got[f]))
				if format != FormatMJPEG && diff != 0 {
					t.Errorf("lossless %s: frame %d has %d pixels changed", format, f, diff)
				}
				if mean > mjpegMeanTol {
					t.Errorf("frame %d: mean error %.2f grey levels", f, mean)
				}
			}
		})
	}
}

func TestWriteFrames(t *testing.T) {
	for _, c := range []struct {
		format string
		bits   int
	}{{FormatPNG, 16}, {FormatPNG, 8}, {FormatTIFF, 16}, {FormatTIFF, 8}} {
		s := small(t)
		dir := t.TempDir()
		if _, err := s.Write(dir, Output{Format: c.format, BitDepth: c.bits}); err != nil {
			t.Fatal(err)
		}
		s.BitDepth = c.bits
		want := rendered(t, s)
		for f := range s.Frames {
			p := filepath.Join(dir, FramesDir, FrameName(f, c.format))
			m := gocv.IMRead(p, gocv.IMReadUnchanged)
			wantType := map[int]gocv.MatType{8: gocv.MatTypeCV8U, 16: gocv.MatTypeCV16U}[c.bits]
			if m.Empty() || m.Type() != wantType {
				t.Errorf("%s: type %v, want %v", p, m.Type(), wantType)
			} else if string(m.ToBytes()) != string(want[f]) {
				t.Errorf("%s differs from the rendered frame", p)
			}
			m.Close()
		}
	}
}

func TestWriteSideFiles(t *testing.T) {
	s := small(t)
	s.StateWalls = true
	dir := t.TempDir()
	tr, err := s.Write(dir, Output{Format: FormatPNG})
	if err != nil {
		t.Fatal(err)
	}
	e, err := experiment.Load(filepath.Join(dir, ExperimentFile))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(e, s.Experiment()) {
		t.Errorf("experiment.yaml read back as %+v, want %+v", e, s.Experiment())
	}
	back, err := ReadTruth(filepath.Join(dir, TruthFile))
	if err != nil {
		t.Fatal(err)
	}
	a, _ := json.Marshal(tr)
	b, _ := json.Marshal(back)
	if string(a) != string(b) {
		t.Errorf("truth.json does not read back as written:\n%s\n%s", a, b)
	}
	if !strings.Contains(string(a), `"slip_moving_um_per_s":40`) { // 0.25 x 160 um/s
		t.Errorf("truth.json lacks the moving-wall slip of 40 um/s: %s", a)
	}
	f, err := os.Open(filepath.Join(dir, TruthTracksFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	pts, err := tracks.ReadCSV(f)
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) != tr.Summary.Tracking.Detections {
		t.Errorf("truth_tracks.csv has %d rows, the truth counts %d detections", len(pts), tr.Summary.Tracking.Detections)
	}
	p3 := byID(s.Positions(3))
	for _, p := range pts {
		if p.Frame != 3 {
			continue
		}
		q := p3[p.Track]
		if d := p.XPx - q.XPx; d > 1e-4 || d < -1e-4 || p.YUM-q.YUM > 1e-4 || q.YUM-p.YUM > 1e-4 {
			t.Fatalf("row %+v disagrees with Positions %+v", p, q)
		}
	}
}

func TestWriteErrors(t *testing.T) {
	s := small(t)
	for _, c := range []struct {
		out  Output
		want string
	}{
		{Output{Format: "gif"}, `"gif"`},
		{Output{Format: FormatFFV1, BitDepth: 16}, "bit depth 16"},
		{Output{Format: FormatPNG, BitDepth: 10}, "bit depth 10"},
	} {
		_, err := s.Write(t.TempDir(), c.out)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one containing %q", c.out, err, c.want)
		}
	}
}

// TestWriteReproducible writes the same scenario and seed twice and checks
// that the frames and the truth files are byte for byte the same.
func TestWriteReproducible(t *testing.T) {
	var runs [2]map[string]string
	for i := range runs {
		dir := t.TempDir()
		s := small(t)
		if _, err := s.Write(dir, Output{Format: FormatPNG}); err != nil {
			t.Fatal(err)
		}
		runs[i] = map[string]string{}
		for _, f := range []string{TruthTracksFile, ExperimentFile, filepath.Join(FramesDir, FrameName(5, FormatPNG))} {
			b, err := os.ReadFile(filepath.Join(dir, f))
			if err != nil {
				t.Fatal(err)
			}
			runs[i][f] = string(b)
		}
	}
	for f, b := range runs[0] {
		if runs[1][f] != b {
			t.Errorf("%s differs between two writes of the same scenario and seed", f)
		}
	}
}
