package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"gaptrace/profile/summary"
)

// nan is the unknown float64.
var nan = math.NaN()

// Unknown is how the report prints a number that was not determined.
const Unknown = "not determined"

// Numbers with an uncertainty follow one rule in every text, table and
// caption of the report: the uncertainty is rounded to uncertaintyDigits
// significant digits and the value to the same decimal place. The GUM
// (JCGM 100:2008, 7.2.6; from memory) says two significant digits of a
// standard uncertainty usually suffice.
const uncertaintyDigits = 2

// errorDecimals returns the number of decimals (negative: tens, hundreds)
// to which an uncertainty e > 0 and its value are rounded: those that keep
// uncertaintyDigits significant digits of e, after rounding (0.0996 is
// 0.10, not 0.100).
func errorDecimals(e float64) int {
	d := uncertaintyDigits - 1 - int(math.Floor(math.Log10(e)))
	if math.Round(e*math.Pow(10, float64(d))) >= math.Pow(10, uncertaintyDigits) {
		d--
	}
	return d
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
	return withUnit(minus(strconv.FormatFloat(v, 'f', decimalsFor(v, valueDigits), 64)), unit)
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
	return withUnit(minus(vs)+" ± "+fixed(e, d), unit)
}

// minus writes a leading hyphen-minus as the minus sign U+2212, as
// typeset text has it.
func minus(s string) string {
	if strings.HasPrefix(s, "-") {
		return "−" + s[1:]
	}
	return s
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

// roundUp rounds v > 0 up to uncertaintyDigits significant digits, as an
// upper limit is rounded: never below what the data exclude.
func roundUp(v float64) (float64, int) {
	d := errorDecimals(v)
	p := math.Pow(10, float64(d))
	// upSlack keeps a value already on the grid (0.3 from 0.30000000000000004) from rising a step.
	const upSlack = 1e-9
	return math.Ceil(v*p-upSlack) / p, d
}

// formatLimit prints an upper limit v > 0, rounded up.
func formatLimit(v float64, unit string) string {
	if !known(v) || v <= 0 {
		return Unknown
	}
	r, d := roundUp(v)
	return withUnit(fixed(r, d), unit)
}
