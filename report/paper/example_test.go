package paper_test

import (
	"fmt"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report/paper"
)

// The content of each label of a small blind plan, in measurement order.
func ExampleLabelsOf() {
	p := design.Plan{Title: "Two diets", Design: design.RCBD,
		Factors: []design.Factor{{Name: "diet", Levels: []string{"standard", "enriched"}}},
		Reps:    []int{1, 1}, Blocks: 2, BlockName: "rack", Seed: 5, Generator: randomize.Generator, Blind: true, Order: true}
	l, err := randomize.Assign(p)
	if err != nil {
		panic(err)
	}
	labels, err := paper.LabelsOf(l.View(), false, true)
	if err != nil {
		panic(err)
	}
	for _, lb := range labels {
		fmt.Printf("%s | %s | %s | %s\n", lb.UnitID, lb.Place, lb.Treatment, lb.Code)
	}
	// Output:
	// 102 | rack 1 · position 2 · measure 1st | code N7J | allot:79a19a4b01f2:102
	// 101 | rack 1 · position 1 · measure 2nd | code MKX | allot:79a19a4b01f2:101
	// 202 | rack 2 · position 2 · measure 1st | code N7J | allot:79a19a4b01f2:202
	// 201 | rack 2 · position 1 · measure 2nd | code MKX | allot:79a19a4b01f2:201
}
