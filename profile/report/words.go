package report

import (
	"fmt"
	"math"
	"strings"

	"gaptrace/profile/summary"
)

// Units as the report prints them.
const (
	unitSpeed = "µm/s"
	unitRate  = "1/s"
	unitLen   = "µm"
)

// phaseFindings returns the plain-words findings of shear phase i (from 0).
func phaseFindings(i int, sp *summary.ShearPhase) (headline string, lines []string) {
	v := num(sp.WallSpeedUMPerS)
	head := fmt.Sprintf("Shear phase %d (%s, analysed over %s): ", i+1, formatSpan(sp.StartS, sp.EndS),
		formatSpan(sp.WindowS[0], sp.WindowS[1]))
	switch sp.Verdict {
	case summary.Homogeneous:
		headline = head + "the sample sheared homogeneously, without wall slip or shear bands."
	case summary.WallSlip:
		headline = head + "the sample slipped at the walls; its bulk sheared uniformly."
	case summary.Banded:
		headline = head + fmt.Sprintf("the sample split into %d shear bands, without wall slip.", len(sp.Bands))
	case summary.WallSlipBanded:
		headline = head + fmt.Sprintf("the sample slipped at the walls and split into %d shear bands.", len(sp.Bands))
	default:
		headline = head + "no verdict was reached."
	}
	frac := func(s, e float64) string {
		if !known(v) || v == 0 || !known(s) {
			return ""
		}
		return ", " + formatPercent(s/math.Abs(v), e/math.Abs(v)) + " of the wall speed"
	}
	lines = append(lines,
		"Wall slip at the moving wall: "+formatPM(num(sp.SlipMovingUMPerS), num(sp.SlipMovingErrUMPerS), unitSpeed)+
			frac(num(sp.SlipMovingUMPerS), num(sp.SlipMovingErrUMPerS))+
			"; Navier slip length "+formatPM(num(sp.SlipLengthMovingUM), num(sp.SlipLengthMovingErrUM), unitLen)+".",
		"Wall slip at the stationary wall: "+formatPM(num(sp.SlipStationaryUMPerS), num(sp.SlipStationaryErrUMPerS), unitSpeed)+
			frac(num(sp.SlipStationaryUMPerS), num(sp.SlipStationaryErrUMPerS))+
			"; Navier slip length "+formatPM(num(sp.SlipLengthStationaryUM), num(sp.SlipLengthStationaryErrUM), unitLen)+".",
		"Bulk shear rate "+formatPM(num(sp.BulkRatePerS), num(sp.BulkRateErrPerS), unitRate)+
			" against a nominal "+formatValue(num(sp.NominalRatePerS), unitRate)+
			" (wall speed "+formatValue(v, unitSpeed)+"); slip takes "+
			formatPercent(num(sp.SlipFraction), num(sp.SlipFractionErr))+" of the imposed motion.",
	)
	if len(sp.Bands) > 1 {
		var bs []string
		for j, b := range sp.Bands {
			bs = append(bs, fmt.Sprintf("band %d from %s to %s at %s", j+1,
				formatValue(num(b.FromUM), ""), formatPM(num(b.ToUM), num(b.ToErrUM), unitLen),
				formatPM(num(b.RatePerS), num(b.RateErrPerS), unitRate)))
		}
		lines = append(lines, "Shear bands, from the stationary wall up: "+strings.Join(bs, "; ")+".")
	}
	return headline, lines
}

// afterStopFindings returns the plain-words findings after cessation.
func afterStopFindings(a *summary.AfterStop) (headline string, lines []string) {
	head := fmt.Sprintf("After the stop at %s (observed for %s): ", formatTime(a.StopS), formatTime(a.ObservedS))
	mode := ""
	if a.Mode != nil {
		mode = *a.Mode
	}
	switch {
	case a.Verdict == summary.Quiescent:
		headline = head + "the sample stayed quiescent."
	case a.Verdict == summary.Moving && mode == summary.ModeBulk:
		headline = head + "the sample failed along a plane inside the gap at " + formatValue(num(a.PlaneUM), unitLen) + "."
	case a.Verdict == summary.Moving && mode == summary.ModeWall:
		headline = head + "the sample slipped at a wall after cessation."
	case a.Verdict == summary.Moving:
		headline = head + "the sample moved."
	default:
		headline = head + "no verdict was reached."
	}
	lines = append(lines,
		"Largest displacement since the stop: "+formatValue(num(a.MaxDisplacementUM), unitLen)+
			" against a noise floor of "+formatValue(num(a.NoiseFloorUM), unitLen)+".",
		"Strain recovered by elastic recoil: "+formatValue(num(a.RecoveredStrain), "")+".",
	)
	if a.Verdict == summary.Moving {
		if on := num(a.OnsetAfterStopS); known(on) {
			lines = append(lines, "Motion above the noise floor began "+formatTime(on)+" after the stop.")
		} else {
			lines = append(lines, "The onset of the motion was "+Unknown+".")
		}
	}
	return headline, lines
}
