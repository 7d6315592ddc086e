package jsonnum

import (
	"encoding/json"
	"math"
	"testing"
)

// TestNull checks the rule of the interface contract that unknown numbers
// are null, never 0, NaN or a string, and that null reads back as unknown.
func TestNull(t *testing.T) {
	for _, c := range []struct {
		v    Num
		want string
	}{
		{Num(1.5), "1.5"}, {Num(0), "0"}, {Num(-2e-7), "-2e-07"}, {Null, "null"},
		{Num(math.Inf(1)), "null"}, {Num(math.Inf(-1)), "null"},
	} {
		b, err := json.Marshal(c.v)
		if err != nil || string(b) != c.want {
			t.Errorf("Marshal(%v) = %s, %v; want %s", float64(c.v), b, err, c.want)
		}
	}
	var v struct {
		A, B Num
	}
	if err := json.Unmarshal([]byte(`{"A": null, "B": 0.25}`), &v); err != nil {
		t.Fatal(err)
	}
	if v.A.Known() || v.B != 0.25 {
		t.Errorf("read back %v, %v", v.A, v.B)
	}
	if err := json.Unmarshal([]byte(`{"A": "fast"}`), &v); err == nil {
		t.Error("a string read as a number")
	}
}
