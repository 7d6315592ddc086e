package campaign

import (
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// TestParse checks what a manifest's rows hold: relative paths taken from
// the manifest's folder, free columns in order, the log columns, and the
// tolerance of a spreadsheet's byte-order mark, comments and blank lines.
func TestParse(t *testing.T) {
	dir := filepath.FromSlash("/lab/flow-curve")
	in := "\ufeffname, input ,experiment,gap_um,log,temperature_c,log_kind,log_offset_s\n" +
		"# a comment line\n" +
		"r1,videos/r1.avi,exp.yaml,800,,25,,\n" +
		"\n" +
		"r2-g600, /data/r2.avi , ../shared/exp.yaml ,600,logs/r2.csv,30,rate,-0.25\n"
	m, err := Parse(strings.NewReader(in), dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"gap_um", "temperature_c"}; !reflect.DeepEqual(m.Free, want) {
		t.Errorf("free columns %v, want %v", m.Free, want)
	}
	want := []Row{
		{Index: 0, Line: 3, Name: "r1", Input: filepath.Join(dir, "videos", "r1.avi"), Experiment: filepath.Join(dir, "exp.yaml"),
			Free: []string{"800", "25"}},
		{Index: 1, Line: 5, Name: "r2-g600", Input: filepath.FromSlash("/data/r2.avi"),
			Experiment: filepath.FromSlash("/lab/shared/exp.yaml"), Log: filepath.Join(dir, "logs", "r2.csv"),
			LogKind: "rate", LogOffsetS: "-0.25", Free: []string{"600", "30"}},
	}
	if !reflect.DeepEqual(m.Rows, want) {
		t.Errorf("rows\n%+v\nwant\n%+v", m.Rows, want)
	}
}

// TestParseErrors checks that each wrong manifest is one line naming the
// line and the value.
func TestParseErrors(t *testing.T) {
	cases := []struct{ name, in, want string }{
		{"empty", "", "empty"},
		{"header only", "name,input,experiment\n", "no rows"},
		{"missing column", "name,input\n", `no "experiment" column`},
		{"unnamed column", "name,input,experiment,\n", "column 4 has no name"},
		{"duplicate column", "name,input,experiment,input\n", `"input" appears twice`},
		{"free column taken", "name,input,experiment,status\n", `"status"`},
		{"free column taken 2", "name,input,experiment,slip_fraction\n", `"slip_fraction"`},
		{"ragged", "name,input,experiment\nr1,a,b,c\n", "line 2"},
		{"duplicate name", "name,input,experiment\nr1,a,b\nr2,a,b\nr1,a,b\n", `line 4: name "r1" is already the name of line 2`},
		{"dot dot", "name,input,experiment\n..,a,b\n", `".."`},
		{"slash", "name,input,experiment\nx/y,a,b\n", "'/'"},
		{"backslash", "name,input,experiment\nx\\y,a,b\n", "'\\\\'"},
		{"space", "name,input,experiment\nr 1,a,b\n", "' '"},
		{"leading dash", "name,input,experiment\n-r1,a,b\n", "'-'"},
		{"reserved", "name,input,experiment\nlogs,a,b\n", `"logs"`},
		{"too long", "name,input,experiment\n" + strings.Repeat("x", MaxNameLen+1) + ",a,b\n", "longer than"},
		{"no experiment", "name,input,experiment\nr1,a,\n", "line 2 (r1): no experiment"},
		{"log option without log column", "name,input,experiment,log_time\nr1,a,b,t\n", `"log_time" without`},
		{"log option without log", "name,input,experiment,log,log_time\nr1,a,b,,t\n", "log columns set but no log"},
		{"offset", "name,input,experiment,log,log_offset_s\nr1,a,b,l,NaN\n", `"NaN"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(c.in), "/lab", Options{})
			if err == nil {
				t.Fatalf("no error, want one mentioning %s", c.want)
			}
			if msg := err.Error(); !strings.Contains(msg, c.want) || strings.Contains(msg, "\n") {
				t.Errorf("error %q: want one line mentioning %s", msg, c.want)
			}
		})
	}
}

// TestReadManifestBounds checks the size bound and a folder given as the
// manifest.
func TestReadManifestBounds(t *testing.T) {
	dir := t.TempDir()
	big := filepath.Join(dir, "big.csv")
	f, _ := os.Create(big)
	f.WriteString("name,input,experiment\n")
	f.Truncate(MaxManifestBytes + 1)
	f.Close()
	if _, err := ReadManifest(big, Options{}); err == nil || !strings.Contains(err.Error(), "larger than") {
		t.Errorf("a file over the bound: %v", err)
	}
	if _, err := ReadManifest(dir, Options{}); err == nil || !strings.Contains(err.Error(), "folder") {
		t.Errorf("a folder: %v", err)
	}
	var b strings.Builder
	b.WriteString("name,input,experiment\n")
	for i := 0; i <= MaxRows; i++ {
		b.WriteString("r" + strconv.Itoa(i) + ",a,b\n")
	}
	if _, err := Parse(strings.NewReader(b.String()), "/lab", Options{}); err == nil || !strings.Contains(err.Error(), "more than") {
		t.Errorf("too many rows: %v", err)
	}
}

// TestShardCoverage checks that for every number of rows and of shards,
// each row is in exactly one shard and the shards' sizes differ by at most
// one (so a job array's tasks get even shares).
func TestShardCoverage(t *testing.T) {
	for rows := 1; rows <= 40; rows++ {
		for n := 1; n <= 12; n++ {
			sizes := make([]int, n)
			for i := 0; i < rows; i++ {
				r := Row{Index: i}
				in := 0
				for k := 0; k < n; k++ {
					if r.InShard(k, n) {
						in++
						sizes[k]++
					}
				}
				if in != 1 {
					t.Fatalf("%d rows, %d shards: row %d is in %d shards", rows, n, i, in)
				}
			}
			lo, hi := rows, 0
			for _, s := range sizes {
				lo, hi = min(lo, s), max(hi, s)
			}
			if hi-lo > 1 {
				t.Errorf("%d rows, %d shards: sizes %v", rows, n, sizes)
			}
		}
	}
}

func TestParseShard(t *testing.T) {
	for _, c := range []struct {
		in   string
		k, n int
		ok   bool
	}{
		{"0/1", 0, 1, true}, {"2/3", 2, 3, true}, {"3/3", 0, 0, false}, {"-1/3", 0, 0, false},
		{"1", 0, 0, false}, {"a/b", 0, 0, false}, {"0/0", 0, 0, false}, {"", 0, 0, false},
	} {
		k, n, err := ParseShard(c.in)
		if (err == nil) != c.ok || k != c.k || n != c.n {
			t.Errorf("ParseShard(%q) = %d, %d, %v", c.in, k, n, err)
		}
	}
}

// TestRunArgs checks the arguments of a row's run: the log flags in the
// shape calib takes them, and the input after "--".
func TestRunArgs(t *testing.T) {
	r := Row{Name: "r1", Input: "/d/-odd.avi", Experiment: "/d/e.yaml"}
	if got, want := r.RunArgs("/o/r1"), []string{"run", "-e", "/d/e.yaml", "-o", "/o/r1", "--", "/d/-odd.avi"}; !reflect.DeepEqual(got, want) {
		t.Errorf("RunArgs = %q, want %q", got, want)
	}
	r.Log, r.LogValue, r.LogKind, r.LogOffsetS = "/d/log.csv", "torque", "angle_deg", "0.5"
	want := []string{"run", "-e", "/d/e.yaml", "-o", "/o/r1", "--log", "/d/log.csv", "--log-value", "torque",
		"--log-kind", "angle_deg", "--log-offset", "0.5", "--", "/d/-odd.avi"}
	if got := r.RunArgs("/o/r1"); !reflect.DeepEqual(got, want) {
		t.Errorf("RunArgs with a log = %q, want %q", got, want)
	}
}

// TestWriteResolved checks that the manifest's copy reads back as the
// same campaign.
func TestWriteResolved(t *testing.T) {
	in := "name,input,experiment,gap_um,log,log_kind\nr1,v.avi,e.yaml,800,l.csv,rate\nr2,w.avi,e.yaml,600,,\n"
	m, err := Parse(strings.NewReader(in), "/lab", Options{})
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	if err := m.WriteResolved(&b); err != nil {
		t.Fatal(err)
	}
	back, err := Parse(strings.NewReader(b.String()), "/elsewhere", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back.Rows, m.Rows) || !reflect.DeepEqual(back.Free, m.Free) {
		t.Errorf("read back\n%+v\nwant\n%+v", back.Rows, m.Rows)
	}
}
