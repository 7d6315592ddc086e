package report

import (
	"fmt"
	"math"
	"strings"

	"gaptrace/profile/cessation"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
)

// Units as the report prints them: journals' s⁻¹ and µm.
const (
	unitSpeed = "µm/s"
	unitRate  = "s⁻¹"
	unitLen   = "µm"
)

// inconclusive is the contract's verdict word for results that contradict
// themselves or the physics.
const inconclusive = "inconclusive"

// headline is the verdict of shear phase i (from 0) in one sentence,
// without its numbers.
func headline(i int, sp *summary.ShearPhase) string {
	head := fmt.Sprintf("Shear phase %d (%s, analysed over %s): ", i+1, formatSpan(sp.StartS, sp.EndS),
		formatSpan(sp.WindowS[0], sp.WindowS[1]))
	switch sp.Verdict {
	case rheometry.Homogeneous:
		return head + "the sample sheared homogeneously, without wall slip or shear bands."
	case rheometry.WallSlip:
		return head + "the sample slipped at the walls; its bulk sheared uniformly."
	case rheometry.Banded:
		return head + fmt.Sprintf("the sample split into %d shear bands, without wall slip.", len(sp.Bands))
	case rheometry.WallSlipBanded:
		return head + fmt.Sprintf("the sample slipped at the walls and split into %d shear bands.", len(sp.Bands))
	case inconclusive:
		return head + "the results contradict themselves or the physics; see the warnings before using them."
	}
	return head + "no verdict was reached."
}

// wallSlipWords is the finding at one wall: the slip with its share of the
// wall speed and its Navier slip length when the data resolve it, an upper
// limit when they do not.
func wallSlipWords(wall string, slip, slipErr, length, lengthErr, wallSpeed float64) string {
	if !known(slip) {
		return "Wall slip at the " + wall + ": " + Unknown + "."
	}
	// Slip counts as positive when the fluid lags the wall that drags it,
	// in phases of either direction.
	dir := 1.0
	if known(wallSpeed) && wallSpeed < 0 {
		dir = -1
	}
	s := slip * dir
	share := func() string {
		if !known(wallSpeed) || wallSpeed == 0 {
			return ""
		}
		return ", " + formatPercent(s/math.Abs(wallSpeed), slipErr/math.Abs(wallSpeed)) + " of the wall speed"
	}
	navier := "; Navier slip length " + formatPM(length, lengthErr, unitLen) + "."
	switch {
	case !known(slipErr) || slipErr <= 0:
		return "Wall slip at the " + wall + ": " + formatValue(s, unitSpeed) + share() + ", uncertainty " + Unknown + navier
	case math.Abs(s) <= rheometry.SlipSigma*slipErr:
		limit := math.Max(s, 0) + rheometry.SlipSigma*slipErr
		basis := fmt.Sprintf("%d standard uncertainties above the measured %s", rheometry.SlipSigma, formatPM(s, slipErr, unitSpeed))
		if s < 0 {
			basis = fmt.Sprintf("%d standard uncertainties above zero; measured %s", rheometry.SlipSigma, formatPM(s, slipErr, unitSpeed))
		}
		out := "No slip detected at the " + wall + ": below " + formatLimit(limit, unitSpeed) + " (" + basis + ")"
		// The slip length scales with the slip at the same wall rate.
		if known(length) && known(slip) && slip != 0 && length/slip > 0 {
			out += "; Navier slip length below " + formatLimit(limit*length/slip*dir, unitLen)
		}
		return out + "."
	case known(wallSpeed) && math.Abs(s) <= rheometry.MinSlipFraction*math.Abs(wallSpeed):
		return fmt.Sprintf("Slip at the %s of %s%s: resolved, but below the %g %% of the wall speed that counts as wall slip "+
			"(a wall line misplaced by 1 %% of the gap gives that much)%s", wall, formatPM(s, slipErr, unitSpeed), share(),
			100*rheometry.MinSlipFraction, navier)
	}
	return "Wall slip at the " + wall + ": " + formatPM(s, slipErr, unitSpeed) + share() + navier
}

// phaseFindings returns the plain-words findings of shear phase i (from 0);
// conv words the convention of its nominal rate (may be empty) and
// meanRatePerS is the wall speed over the gap where it differs from the
// nominal rate (NaN otherwise).
func phaseFindings(i int, sp *summary.ShearPhase, conv string, meanRatePerS float64) (string, []string) {
	v := num(sp.WallSpeedUMPerS)
	lines := []string{
		wallSlipWords("moving wall", num(sp.SlipMovingUMPerS), num(sp.SlipMovingErrUMPerS),
			num(sp.SlipLengthMovingUM), num(sp.SlipLengthMovingErrUM), v),
		wallSlipWords("stationary wall", num(sp.SlipStationaryUMPerS), num(sp.SlipStationaryErrUMPerS),
			num(sp.SlipLengthStationaryUM), num(sp.SlipLengthStationaryErrUM), v),
	}
	nominal := "a nominal " + formatValue(num(sp.NominalRatePerS), unitRate)
	if conv != "" {
		nominal += " (" + conv + ")"
	}
	bulk := "Bulk shear rate " + formatPM(num(sp.BulkRatePerS), num(sp.BulkRateErrPerS), unitRate) + " against " + nominal +
		"; wall speed " + formatValue(v, unitSpeed)
	if known(meanRatePerS) {
		bulk += ", which over the gap is a mean rate of " + formatValue(meanRatePerS, unitRate)
	}
	bulk += "; slip takes " + formatPercent(num(sp.SlipFraction), num(sp.SlipFractionErr)) + " of the imposed motion."
	lines = append(lines, bulk)
	if len(sp.Bands) > 1 {
		var bs []string
		for j, b := range sp.Bands {
			bs = append(bs, fmt.Sprintf("band %d from %s to %s at %s", j+1,
				formatValue(num(b.FromUM), ""), formatPM(num(b.ToUM), num(b.ToErrUM), unitLen),
				formatPM(num(b.RatePerS), num(b.RateErrPerS), unitRate)))
		}
		lines = append(lines, "Shear bands, from the stationary wall up: "+strings.Join(bs, "; ")+".")
	}
	lines = append(lines, onsetWords(sp))
	return headline(i, sp), lines
}

// onsetWords says when the profile first departed from the affine no-slip
// profile, in windows of which length.
func onsetWords(sp *summary.ShearPhase) string {
	w := formatTime(num(sp.InTimeWindowS))
	if !known(num(sp.InhomogeneityOnsetS)) || sp.InhomogeneityFirst == nil {
		return "In windows of " + w + " through the phase, the profile never departed from the affine profile without slip."
	}
	what := "wall slip"
	if *sp.InhomogeneityFirst == "bands" {
		what = "shear bands"
	}
	s := "In windows of " + w + " through the phase, the profile first departed from the affine profile without slip " +
		formatPM(num(sp.InhomogeneityOnsetS), num(sp.InhomogeneityOnsetErrS), "s") + " after the start, by " + what
	if known(num(sp.InhomogeneityOnsetStrain)) {
		s += ", at a nominal strain of " + formatValue(num(sp.InhomogeneityOnsetStrain), "")
	}
	if pk := num(sp.StressPeakS); known(pk) {
		d := num(sp.InhomogeneityOnsetS) - pk
		rel := "after"
		if d < 0 {
			rel = "before"
		}
		s += "; that is " + formatPM(math.Abs(d), num(sp.InhomogeneityOnsetErrS), "s") + " " + rel + " the stress maximum of the rheometer's log"
	}
	return s + "."
}

// afterStopHeadline is the verdict after cessation in one sentence.
func afterStopHeadline(a *summary.AfterStop) string {
	head := fmt.Sprintf("After the stop at %s (observed for %s): ", formatTime(a.StopS), formatTime(a.ObservedS))
	mode := ""
	if a.Mode != nil {
		mode = *a.Mode
	}
	switch {
	case a.Verdict == cessation.Quiescent:
		return head + "the sample stayed quiescent."
	case a.Verdict == cessation.Moving && mode == cessation.ModeBulk:
		return head + "the sample failed along a plane inside the gap at " + formatValue(num(a.PlaneUM), unitLen) + "."
	case a.Verdict == cessation.Moving && mode == cessation.ModeWall:
		return head + "the sample slipped at a wall after cessation."
	case a.Verdict == cessation.Moving:
		return head + "the sample moved."
	case a.Verdict == inconclusive:
		return head + "the results contradict themselves or the physics; see the warnings."
	}
	return head + "no verdict was reached."
}

// afterStopFindings returns the plain-words findings after cessation.
func afterStopFindings(a *summary.AfterStop) (string, []string) {
	maxDx, floor := num(a.MaxDisplacementUM), num(a.NoiseFloorUM)
	var lines []string
	if a.Verdict == cessation.Quiescent && known(floor) {
		lines = append(lines, "No motion detected: the displacement of the sample at the walls stays within the noise floor of "+
			formatValue(floor, unitLen)+" (what noise alone reaches with 3 combined standard uncertainties, the camera's shared "+
			"motion included); the largest displacement of a single layer since the stop is "+formatValue(maxDx, unitLen)+".")
	} else {
		lines = append(lines, "Largest displacement since the stop: "+formatValue(maxDx, unitLen)+
			" against a noise floor of "+formatValue(floor, unitLen)+".")
	}
	lines = append(lines, "Strain recovered by elastic recoil: "+formatPM(num(a.RecoveredStrain), num(a.RecoveredStrainErr), "")+".")
	if a.Verdict == cessation.Moving {
		if pl := num(a.PlaneUM); known(pl) {
			lines = append(lines, "Failure plane at "+formatPM(pl, num(a.PlaneErrUM), unitLen)+" above the stationary wall.")
		}
		if on := num(a.OnsetAfterStopS); known(on) {
			line := "Motion above the noise floor began " + formatTime(on) + " after the stop"
			if e := num(a.OnsetAfterStopErrS); known(e) {
				line += " (± " + formatTime(e) + ")"
			}
			lines = append(lines, line+".")
		} else {
			lines = append(lines, "The onset of the motion was "+Unknown+".")
		}
	}
	return afterStopHeadline(a), lines
}

// VerdictLines returns the verdicts of a run in one line each, for a
// terminal: each shear phase, then the time after the stop, with the
// verdict word of summary.json first.
func VerdictLines(s *summary.Summary) []string {
	var out []string
	for i := range s.ShearPhases {
		sp := &s.ShearPhases[i]
		out = append(out, verdictWord(sp.Verdict)+": "+headline(i, sp))
	}
	if a := s.AfterStop; a != nil {
		w := a.Verdict
		if a.Mode != nil {
			w += " (" + *a.Mode + ")"
		}
		out = append(out, verdictWord(w)+": "+afterStopHeadline(a))
	}
	return out
}

func verdictWord(v string) string {
	if v == "" {
		return "no verdict"
	}
	return v
}
