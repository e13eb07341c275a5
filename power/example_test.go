package power_test

import (
	"fmt"

	"github.com/allotproject/allot/power"
)

// Units per group for a one-way layout of four groups, Cohen's f = 0.25,
// alpha 0.05 and 90% power.
func ExampleDesign_Solve() {
	d := power.Design{Factors: []power.Factor{{Name: "feed", Levels: 4}}}
	r, err := d.Solve(0.25, 0.05, 0.90)
	if err != nil {
		panic(err)
	}
	fmt.Printf("n = %d per group, N = %d, df = %g, %g, power = %.4f\n", r.N, r.Total, r.DF1, r.DF2, r.Power)
	// Output: n = 58 per group, N = 232, df = 3, 228, power = 0.9018
}

// Cohen's f from expected means and the SD between units.
func ExampleFFromMeans() {
	f, _ := power.FFromMeans([]float64{10, 12, 14}, nil, 4)
	fmt.Printf("f = %.4f\n", f)
	// Output: f = 0.4082
}
