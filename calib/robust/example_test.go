package robust_test

import (
	"fmt"

	"gaptrace/calib/robust"
)

// The median and the normal standard deviation from the MAD of a sample
// with one wild value, which moves neither.
func Example() {
	v := []float64{10.2, 9.8, 10.1, 9.9, 10.0, 55}
	med, mad := robust.MAD(v)
	fmt.Printf("median %.2f, sigma %.3f\n", med, robust.MADToSigma*mad)
	fmt.Println("input kept:", v[5] == 55)
	// Output:
	// median 10.05, sigma 0.222
	// input kept: true
}
