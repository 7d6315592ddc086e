package main

import (
	"bytes"
	"encoding/json"
	"os/exec"
	"strings"
	"testing"
)

// chainLayers is the one-way chain of the design, from the bottom up:
// calibration below everything, then frames → detections → tracks →
// profiles → verdicts → report, the pipeline that runs them all, and the
// command. profile/summary, the schema of summary.json and nothing else,
// stands with the verdicts: it holds the types that profile fills, and
// imports only the phases and the calibration they embed. A package may import packages of its own layer or below, never
// above. Each entry is a path prefix relative to the module; the longest
// matching prefix gives a package's layer.
var chainLayers = [][]string{
	{"calib"},
	{"track/frames", "track/internal"},
	{"track/detect"},
	{"track/tracks", "track/flowprior", "track/link"},
	{"profile/velocity", "profile/layers", "profile/bands", "profile/phases", "profile/stillspots"},
	{"profile/rheometry", "profile/cessation", "profile", "profile/summary"},
	{"profile/report", "profile/campaign"},
	{"profile/pipeline"},
	{"cmd"},
}

// testBeds are outside the chain: they serve the tests (and the synth and
// demo commands), so no package of the chain below the command may import
// them; they themselves import nothing from profile.
var testBeds = []string{"track/synth", "track/matleak"}

// layerOf returns the layer of module-relative path p and whether p is a
// test bed.
func layerOf(p string) (layer int, bed bool) {
	for _, b := range testBeds {
		if p == b || strings.HasPrefix(p, b+"/") {
			return -1, true
		}
	}
	best, layer := -1, -1
	for i, l := range chainLayers {
		for _, pre := range l {
			if (p == pre || strings.HasPrefix(p, pre+"/")) && len(pre) > best {
				best, layer = len(pre), i
			}
		}
	}
	return layer, false
}

// edgeFault returns what is wrong with an import of package to by package
// from (module-relative paths), or "".
func edgeFault(from, to string) string {
	lf, bedF := layerOf(from)
	lt, bedT := layerOf(to)
	switch {
	case bedT && !bedF && lf < len(chainLayers)-1:
		return "a package of the chain imports a test bed"
	case bedF && (to == "profile" || strings.HasPrefix(to, "profile/")):
		return "a test bed imports from profile"
	case !bedF && !bedT && lt > lf:
		return "an import up the chain"
	}
	return ""
}

// TestEdgeFault checks the rule on edges of each kind.
func TestEdgeFault(t *testing.T) {
	for _, c := range []struct {
		from, to string
		bad      bool
	}{
		{"calib/walls", "calib/geometry", false},
		{"calib", "track/frames", true},
		{"calib/experiment", "profile/summary", true},
		{"track/link", "track/frames", false},
		{"track/frames", "track/link", true},
		{"track/detect", "profile/phases", true},
		{"profile/rheometry", "profile/bands", false},
		{"profile/bands", "profile/rheometry", true},
		{"profile/report", "profile", false},
		{"profile", "profile/pipeline", true},
		{"profile/pipeline", "track/synth", true},
		{"cmd/gaptrace", "track/synth", false},
		{"track/synth", "calib", false},
		{"track/synth", "profile/summary", true},
	} {
		if got := edgeFault(c.from, c.to) != ""; got != c.bad {
			t.Errorf("%s -> %s: fault %v, want %v", c.from, c.to, got, c.bad)
		}
	}
}

// TestImportsPointDown reads the module's import graph with go list and
// fails on any edge up the chain, on any package of the chain that imports
// a test bed, and on a test bed or its tests importing from profile.
func TestImportsPointDown(t *testing.T) {
	out, err := exec.Command("go", "list", "-json", "gaptrace/...").Output()
	if err != nil {
		t.Fatalf("go list: %v", err)
	}
	dec := json.NewDecoder(bytes.NewReader(out))
	for dec.More() {
		var p struct {
			ImportPath           string
			Imports, TestImports []string
		}
		if err := dec.Decode(&p); err != nil {
			t.Fatal(err)
		}
		from := strings.TrimPrefix(p.ImportPath, "gaptrace/")
		lf, bed := layerOf(from)
		if lf < 0 && !bed {
			t.Errorf("package %s is in no layer of the chain", from)
			continue
		}
		imports := p.Imports
		if bed {
			// A test bed's own tests, too, check it without the analysis.
			imports = append(imports, p.TestImports...)
		}
		for _, imp := range imports {
			if !strings.HasPrefix(imp, "gaptrace/") {
				continue
			}
			to := strings.TrimPrefix(imp, "gaptrace/")
			if bad := edgeFault(from, to); bad != "" {
				t.Errorf("%s -> %s: %s", from, to, bad)
			}
		}
	}
}

// TestLowerFoldersDeps checks the design's two folder rules on everything
// the packages build from (go list -deps): calib uses nothing of track or
// profile, and track nothing of profile.
func TestLowerFoldersDeps(t *testing.T) {
	for _, c := range []struct {
		folder    string
		forbidden []string
	}{
		{"calib", []string{"gaptrace/track", "gaptrace/profile"}},
		{"track", []string{"gaptrace/profile"}},
	} {
		out, err := exec.Command("go", "list", "-deps", "gaptrace/"+c.folder+"/...").Output()
		if err != nil {
			t.Fatalf("go list -deps %s: %v", c.folder, err)
		}
		for _, dep := range strings.Fields(string(out)) {
			for _, f := range c.forbidden {
				if dep == f || strings.HasPrefix(dep, f+"/") {
					t.Errorf("%s builds from %s", c.folder, dep)
				}
			}
		}
	}
}
