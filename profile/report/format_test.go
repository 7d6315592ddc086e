package report

import (
	"math"
	"testing"
)

func TestFormatPM(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	// One rule: the uncertainty to two significant digits, the value to
	// the same decimal place (GUM, JCGM 100:2008, 7.2.6, which says two
	// digits of an uncertainty usually suffice; from memory).
	cases := []struct {
		v, e float64
		unit string
		want string
	}{
		{310.4, 12.3, "µm/s", "310 ± 12 µm/s"},
		{310.4, 35.4, "µm/s", "310 ± 35 µm/s"},
		{310.4, 35.5, "µm/s", "310 ± 36 µm/s"},
		{1.4912, 0.0123, "s⁻¹", "1.491 ± 0.012 s⁻¹"},
		{1.4912, 0.087, "s⁻¹", "1.491 ± 0.087 s⁻¹"},
		{1.4912, 0.0966, "s⁻¹", "1.491 ± 0.097 s⁻¹"},
		{1.4912, 0.0996, "s⁻¹", "1.49 ± 0.10 s⁻¹"}, // 0.0996 rounds up into the next decade: still two digits
		{0.0004, 0.02, "", "0.000 ± 0.020"},        // no "-0"
		{-0.0004, 0.02, "", "0.000 ± 0.020"},
		{1234.5, 260, "µm", "1230 ± 260 µm"},
		{5.0, 2.0, "µm/s", "5.0 ± 2.0 µm/s"},
		{26.3, 0.4, "%", "26.30 ± 0.40 %"},
		{-12.345, 0.0678, "µm", "−12.345 ± 0.068 µm"}, // the minus sign U+2212
		{nan, 1, "µm/s", Unknown},
		{inf, 1, "µm/s", Unknown},
		{310.4, nan, "µm/s", "310 µm/s"},
		{310.4, 0, "µm/s", "310 µm/s"},
		{310.4, -3, "µm/s", "310 µm/s"},
	}
	for _, c := range cases {
		if got := formatPM(c.v, c.e, c.unit); got != c.want {
			t.Errorf("formatPM(%g, %g, %q) = %q, want %q", c.v, c.e, c.unit, got, c.want)
		}
	}
}

func TestFormatValue(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{
		{1200, "1200 µm"}, {0.0036, "0.00360 µm"}, {2, "2.00 µm"}, {0, "0 µm"}, {-12.345, "−12.3 µm"},
		{math.NaN(), Unknown}, {math.Inf(-1), Unknown},
	} {
		if got := formatValue(c.v, "µm"); got != c.want {
			t.Errorf("formatValue(%g) = %q, want %q", c.v, got, c.want)
		}
	}
	for _, c := range []struct {
		t    float64
		want string
	}{{0.5, "0.5 s"}, {2, "2 s"}, {1.2345, "1.234 s"}, {-0.0001, "0 s"}, {math.NaN(), Unknown}} {
		if got := formatTime(c.t); got != c.want {
			t.Errorf("formatTime(%g) = %q, want %q", c.t, got, c.want)
		}
	}
}

// An upper limit is rounded up to two significant digits, never down
// below what the data exclude.
func TestFormatLimit(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{
		{0.2937, "0.30 µm/s"}, {0.3, "0.30 µm/s"}, {0.1 + 0.2, "0.30 µm/s"}, {1.234, "1.3 µm/s"},
		{0.996, "1.0 µm/s"}, {47.01, "48 µm/s"}, {0, Unknown}, {math.NaN(), Unknown},
	} {
		if got := formatLimit(c.v, "µm/s"); got != c.want {
			t.Errorf("formatLimit(%g) = %q, want %q", c.v, got, c.want)
		}
	}
}
