package experiment

import (
	"fmt"
	"io"
	"strconv"

	"go.yaml.in/yaml/v3"
)

// MaxFileBytes bounds an experiment file: one is a few hundred bytes, a
// motion program of MaxSteps steps some hundred kilobytes; 4 MiB is no
// experiment file (a video or /dev/zero given to -e).
const MaxFileBytes = 4 << 20

// readBounded reads r up to MaxFileBytes and refuses more.
func readBounded(r io.Reader) ([]byte, error) {
	b, err := io.ReadAll(io.LimitReader(r, MaxFileBytes+1))
	if err != nil {
		return nil, err
	}
	if len(b) > MaxFileBytes {
		return nil, fmt.Errorf("larger than %d bytes: not an experiment file", MaxFileBytes)
	}
	return b, nil
}

// zeroMeansAbsent lists the keys whose zero value means "not given" in
// the Go structure: a 0 written in the file is then a mistake the file
// must not make silently (issue 18: `fps: 0` quietly took the video's
// rate), with what to write instead.
var zeroMeansAbsent = map[[2]string]string{
	{"camera", "fps"}:          "leave the key out to take the video's rate",
	{"camera", "um_per_px"}:    "leave the key out to take the scale from the gap or a target",
	{"tracers", "diameter_px"}: "leave the key out for the default",
}

// checkExplicitZeros refuses a key of zeroMeansAbsent written as 0 in the
// file b, which has decoded already (its aliases are bounded).
func checkExplicitZeros(b []byte) error {
	var doc yaml.Node
	if err := yaml.Unmarshal(b, &doc); err != nil || len(doc.Content) == 0 {
		return nil // the decoder has said what is wrong
	}
	root := doc.Content[0]
	if root.Kind != yaml.MappingNode {
		return nil
	}
	for i := 0; i+1 < len(root.Content); i += 2 {
		section, body := root.Content[i].Value, root.Content[i+1]
		if body.Kind != yaml.MappingNode {
			continue
		}
		for j := 0; j+1 < len(body.Content); j += 2 {
			k, v := body.Content[j], body.Content[j+1]
			hint, ok := zeroMeansAbsent[[2]string{section, k.Value}]
			if !ok || v.Kind != yaml.ScalarNode {
				continue
			}
			if x, err := strconv.ParseFloat(v.Value, 64); err == nil && x == 0 {
				return fmt.Errorf("line %d: %s.%s: %s is not a value: %s", v.Line, section, k.Value, v.Value, hint)
			}
		}
	}
	return nil
}
