package figure

import (
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
)

// minusSign writes a leading hyphen-minus as the minus sign U+2212, as
// typeset text has it.
func minusSign(s string) string {
	if strings.HasPrefix(s, "-") {
		return "−" + s[1:]
	}
	return s
}

// niceTicks places about Major labelled ticks at 1, 2 or 5 times a power of
// ten, with minor ticks between, and labels them with no more decimals than
// the step needs (so 12.5, not 12.50).
type niceTicks struct{ Major int }

// Ticks implements plot.Ticker.
func (n niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || !finite(lo, hi) {
		return nil
	}
	major := max(2, n.Major)
	raw := (hi - lo) / float64(major)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	var step float64
	var minors int
	// The step nearest raw on a log scale: the thresholds are the geometric
	// means of 1, 2, 5 and 10.
	switch m := raw / p; {
	case m < math.Sqrt2:
		step, minors = p, 5
	case m < math.Sqrt(10):
		step, minors = 2*p, 4
	case m < math.Sqrt(50):
		step, minors = 5*p, 5
	default:
		step, minors = 10*p, 5
	}
	decimals := max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	var ticks []plot.Tick
	minor := step / float64(minors)
	// tickSlack: a tick this close to an end (in steps) still counts as inside.
	const tickSlack = 1e-9
	first := math.Ceil(lo/minor-tickSlack) * minor
	for i := 0; ; i++ {
		v := first + float64(i)*minor
		if v > hi+tickSlack*step {
			break
		}
		k := math.Round(v / minor)
		v = k * minor
		if math.Mod(k, float64(minors)) == 0 {
			if v == 0 {
				v = 0 // not "-0"
			}
			ticks = append(ticks, plot.Tick{Value: v, Label: minusSign(strconv.FormatFloat(v, 'f', decimals, 64))})
		} else {
			ticks = append(ticks, plot.Tick{Value: v})
		}
	}
	return ticks
}
