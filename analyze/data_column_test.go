package analyze

import (
	"math"
	"math/big"
	"strconv"
	"testing"

	"github.com/allotproject/allot/column"
)

// A decimal column centres exactly as the same texts do, including values
// beyond 2^53 that take the slow path.
func TestCentreDecimalColumn(t *testing.T) {
	texts := []string{"100.59", "-3", "0.0001", "12.50", "9007199254740993", "0", "-0.25"}
	var d column.Decimals
	for _, s := range texts {
		d.Add([]byte(s))
	}
	dec := d.Text()
	if _, _, ok := dec.Decimal(); !ok {
		t.Fatal("not a decimal column")
	}
	a, err := centre(column.Of(texts))
	if err != nil {
		t.Fatal(err)
	}
	b, err := centre(dec)
	if err != nil {
		t.Fatal(err)
	}
	if a.shift.Cmp(b.shift) != 0 || a.exp != b.exp || len(a.y) != len(b.y) {
		t.Fatalf("shift %v exp %d, decimal column %v %d", a.shift, a.exp, b.shift, b.exp)
	}
	for i := range a.y {
		if a.y[i] != b.y[i] {
			t.Errorf("value %d: %v from text, %v from the decimal column", i, a.y[i], b.y[i])
		}
		if a.ints != nil && a.ints[i] != b.ints[i] {
			t.Errorf("value %d: exact %d from text, %d from the decimal column", i, a.ints[i], b.ints[i])
		}
	}
	// The median observation, exactly.
	if want, _ := new(big.Rat).SetString("0.0001"); a.shift.Cmp(want) != 0 {
		t.Errorf("shift %v, want 0.0001", a.shift)
	}
}

// Run checks the residuals of a large data set beside the comparisons; the
// result is the one the checks give on their own (run with -race too).
func TestParallelChecksSame(t *testing.T) {
	for _, blocks := range []int{0, 8} {
		n := parallelChecks + 4000
		rng := splitmix(uint64(7 + blocks))
		var vals, trt, blk []string
		for i := range n {
			vals = append(vals, strconv.FormatFloat(10+float64(i%4)*0.1+rng.normal(), 'f', 3, 64))
			trt = append(trt, "t"+strconv.Itoa(i%4))
			if blocks > 0 {
				blk = append(blk, "b"+strconv.Itoa((i/4)%blocks))
			}
		}
		d := Data{Response: "y", Values: column.Of(vals), Factors: []Column{{Name: "trt", Values: column.Code(trt)}}}
		if blocks > 0 {
			d.Block = &Column{Name: "block", Values: column.Code(blk)}
		}
		res, err := Run(d, RunOptions{})
		if err != nil {
			t.Fatal(err)
		}
		want := checkAssumptions(d, res.Table)
		got := res.Assumptions
		if got.ShapiroW != want.ShapiroW && !(math.IsNaN(got.ShapiroW) && math.IsNaN(want.ShapiroW)) || got.Levene != want.Levene || got.LeveneP != want.LeveneP || got.SDRatio != want.SDRatio || len(got.Outliers) != len(want.Outliers) || got.Len() != n {
			t.Errorf("%d blocks: checks beside the comparisons %+v, alone %+v", blocks, got, want)
		}
	}
}

// The same with two factors and a strong interaction: the simple effects,
// the main-effect comparisons and the checks run together.
func TestParallelChecksFactorial(t *testing.T) {
	n := parallelChecks + 1000
	rng := splitmix(11)
	var vals, a, b []string
	for i := range n {
		ia, ib := i%2, (i/2)%3
		vals = append(vals, strconv.FormatFloat(5+float64(ia*ib)+rng.normal(), 'f', 4, 64))
		a, b = append(a, "a"+strconv.Itoa(ia)), append(b, "b"+strconv.Itoa(ib))
	}
	d := Data{Response: "y", Values: column.Of(vals), Factors: []Column{{Name: "A", Values: column.Code(a)}, {Name: "B", Values: column.Code(b)}}}
	res, err := Run(d, RunOptions{Options: Options{SSType: 3}})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Simple) == 0 || len(res.PostHoc) != 2 {
		t.Fatalf("%d simple-effect families, %d comparison families", len(res.Simple), len(res.PostHoc))
	}
	if want := checkAssumptions(d, res.Table); res.Assumptions.LeveneP != want.LeveneP || res.Assumptions.SDRatio != want.SDRatio {
		t.Errorf("checks beside the comparisons %+v, alone %+v", res.Assumptions, want)
	}
}
