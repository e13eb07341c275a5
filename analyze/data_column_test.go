package analyze

import (
	"math/big"
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
