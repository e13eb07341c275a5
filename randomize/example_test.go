package randomize_test

import (
	"fmt"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
)

// Three feeds on two benches: each bench holds each feed once, in an order
// fixed by the seed. (The output agrees with
// testdata/reference/allot_pcg_v1.py, an implementation from the
// documentation.)
func ExampleAssign() {
	p := design.Plan{Title: "example", Design: design.RCBD, Factors: []design.Factor{{Name: "feed", Levels: []string{"A", "B", "C"}}},
		Reps: []int{1, 1, 1}, Blocks: 2, BlockName: "bench", Seed: 42}
	l, err := randomize.Assign(p)
	if err != nil {
		panic(err)
	}
	for _, u := range l.Units {
		fmt.Print(u.ID, ":", l.Label(u), " ")
	}
	fmt.Println()
	// Output: 101:B 102:C 103:A 201:A 202:B 203:C
}
