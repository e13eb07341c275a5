package design_test

import (
	"fmt"

	"github.com/allotproject/allot/design"
)

// A factorial plan's treatments are the full combination of the levels,
// the first factor varying slowest.
func ExamplePlan_Treatments() {
	p := design.Plan{Factors: []design.Factor{{Name: "N", Levels: []string{"N0", "N1"}}, {Name: "K", Levels: []string{"K0", "K1"}}}}
	for _, t := range p.Treatments() {
		fmt.Println(t.Index, t.Name)
	}
	// Output:
	// 0 N0 × K0
	// 1 N0 × K1
	// 2 N1 × K0
	// 3 N1 × K1
}

func ExampleUnitID() {
	fmt.Println(design.UnitID(1, 1, 12), design.UnitID(3, 7, 12), design.UnitID(2, 5, 150))
	// Output: 101 307 2005
}
