package jsonnum_test

import (
	"encoding/json"
	"fmt"
	"math"

	"gaptrace/calib/jsonnum"
)

// An unknown slip length is null in the file and unknown again when read.
func Example() {
	type row struct {
		SlipLengthUM jsonnum.Num `json:"slip_length_um"`
		RatePerS     jsonnum.Num `json:"rate_per_s"`
	}
	b, _ := json.Marshal(row{SlipLengthUM: jsonnum.Num(math.NaN()), RatePerS: 1.5})
	fmt.Println(string(b))
	var back row
	_ = json.Unmarshal(b, &back)
	fmt.Println(back.SlipLengthUM.Known(), back.RatePerS.Known())
	// Output:
	// {"slip_length_um":null,"rate_per_s":1.5}
	// false true
}
