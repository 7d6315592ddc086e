package report

import (
	"math"
	"testing"
)

func TestFormatPM(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	// Rounding by the Particle Data Group rule (Review of Particle Physics,
	// introduction, "Rounding"; from memory): three leading digits of the
	// error 100-354 keep two digits, 355-949 one, 950-999 round up to 1000
	// with two.
	cases := []struct {
		v, e float64
		unit string
		want string
	}{
		{310.4, 12.3, "µm/s", "310 ± 12 µm/s"},
		{310.4, 35.4, "µm/s", "310 ± 35 µm/s"},
		{310.4, 35.5, "µm/s", "310 ± 40 µm/s"}, // one digit, the value to the same place: 310
		{1.4912, 0.0123, "1/s", "1.491 ± 0.012 1/s"},
		{1.4912, 0.087, "1/s", "1.49 ± 0.09 1/s"},
		{1.4912, 0.0966, "1/s", "1.49 ± 0.10 1/s"}, // 966 rounds up to 100, two digits
		{0.0004, 0.02, "", "0.000 ± 0.020"},        // no "-0"
		{-0.0004, 0.02, "", "0.000 ± 0.020"},
		{1234.5, 260, "µm", "1230 ± 260 µm"},
		{5.0, 2.0, "µm/s", "5.0 ± 2.0 µm/s"},
		{26.3, 0.4, "%", "26.3 ± 0.4 %"},
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
		{1200, "1200 µm"}, {0.0036, "0.00360 µm"}, {2, "2.00 µm"}, {0, "0 µm"}, {-12.345, "-12.3 µm"},
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
