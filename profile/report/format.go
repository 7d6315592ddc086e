package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"gaptrace/profile/summary"
)

// Unknown is how the report prints a number that was not determined.
const Unknown = "not determined"

// errorDecimals returns the number of decimals (negative: tens, hundreds)
// to which an uncertainty e > 0
// and its value are rounded, by the rule of the Particle Data Group (Review
// of Particle Physics, introduction, "Rounding"; from memory): take the
// three leading digits of e; from 100 to 354 keep two significant digits,
// from 355 to 949 one, from 950 up round e up to 1000 and keep two.
func errorDecimals(e float64) int {
	n := int(math.Floor(math.Log10(e)))
	lead := math.Round(e / math.Pow(10, float64(n-2)))
	if lead >= 1000 { // e rounded up into the next decade
		n, lead = n+1, 100
	}
	if lead <= 354 {
		return 1 - n
	}
	return -n // one digit; or 950..999, where e is 10^(n+1) shown with two digits
}

// fixed prints v rounded to d decimals; a negative d rounds to tens,
// hundreds, and so on.
func fixed(v float64, d int) string {
	if d < 0 {
		p := math.Pow(10, float64(-d))
		return strconv.FormatFloat(math.Round(v/p)*p, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', d, 64)
}

// valueDigits is the number of significant digits of a value printed
// without an uncertainty.
const valueDigits = 3

// known reports whether v is a finite number.
func known(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// decimalsFor is the number of decimals that shows v with digits
// significant digits.
func decimalsFor(v float64, digits int) int {
	if v == 0 {
		return 0
	}
	return max(0, digits-1-int(math.Floor(math.Log10(math.Abs(v)))))
}

// formatValue prints v with valueDigits significant digits (never in
// exponent form) and the unit, or Unknown.
func formatValue(v float64, unit string) string {
	if !known(v) {
		return Unknown
	}
	return withUnit(strconv.FormatFloat(v, 'f', decimalsFor(v, valueDigits), 64), unit)
}

// formatPM prints "v ± e unit" with e rounded by errorDecimals and v to the
// same decimal place; without a known positive e it
// prints the value alone, and Unknown when v is not known.
func formatPM(v, e float64, unit string) string {
	if !known(v) {
		return Unknown
	}
	if !known(e) || e <= 0 {
		return formatValue(v, unit)
	}
	d := errorDecimals(e)
	vs := fixed(v, d)
	if strings.Trim(vs, "-0.") == "" {
		vs = strings.TrimPrefix(vs, "-") // no "-0.0"
	}
	return withUnit(vs+" ± "+fixed(e, d), unit)
}

func withUnit(s, unit string) string {
	if unit == "" {
		return s
	}
	if unit == "%" {
		return s + " %"
	}
	return s + " " + unit
}

// num converts a summary number.
func num(n summary.Num) float64 { return float64(n) }

// formatPercent prints a fraction as a percentage with its uncertainty.
func formatPercent(f, e float64) string {
	return formatPM(100*f, 100*e, "%")
}

// formatTime prints a time in seconds to a millisecond at most.
func formatTime(tS float64) string {
	if !known(tS) {
		return Unknown
	}
	s := strconv.FormatFloat(tS, 'f', 3, 64)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		s = "0"
	}
	return s + " s"
}

// formatSpan prints a time interval.
func formatSpan(t0, t1 float64) string {
	return fmt.Sprintf("%s – %s", strings.TrimSuffix(formatTime(t0), " s"), formatTime(t1))
}
