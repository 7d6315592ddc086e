// Package jsonnum is a float64 for JSON files in which an unknown number is
// null: NaN or an infinity is written as null, and null reads back as NaN.
// summary.json (as summary.Num) and the test bed's truth.json use it.
package jsonnum

import (
	"fmt"
	"math"
	"strconv"
)

// Num is a float64, in whatever unit the field holding it names, that is
// written to JSON as null when it is NaN or infinite, and read back from
// null as NaN.
type Num float64

// Null is the unknown Num.
var Null = Num(math.NaN())

// Known reports whether n holds a finite number.
func (n Num) Known() bool { return !math.IsNaN(float64(n)) && !math.IsInf(float64(n), 0) }

// MarshalJSON implements json.Marshaler: ten significant digits, or null.
func (n Num) MarshalJSON() ([]byte, error) {
	if !n.Known() {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, float64(n), 'g', 10, 64), nil
}

// UnmarshalJSON implements json.Unmarshaler.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Null
		return nil
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("jsonnum: %q is not a number or null", b)
	}
	*n = Num(v)
	return nil
}
