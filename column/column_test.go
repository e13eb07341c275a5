package column

import (
	"reflect"
	"strings"
	"testing"
)

func TestForms(t *testing.T) {
	rows := []string{"a", "", "ünïcode", "a", "b", "a", strings.Repeat("x", 300)}
	var p Packer
	var c Coder
	for _, r := range rows {
		p.Add([]byte(r))
		c.AddString(r)
	}
	forms := map[string]Text{"plain": Of(rows), "packed": p.Text(), "coded": c.Text(), "code": Code(rows)}
	for name, tx := range forms {
		if tx.Len() != len(rows) {
			t.Fatalf("%s: Len %d, want %d", name, tx.Len(), len(rows))
		}
		for i, want := range rows {
			if got := tx.At(i); got != want {
				t.Errorf("%s: At(%d) = %q, want %q", name, i, got, want)
			}
		}
		if got := tx.Strings(); !reflect.DeepEqual(got, rows) {
			t.Errorf("%s: Strings = %q", name, got)
		}
		idx := []int{6, 0, 0, 3}
		pick := tx.Pick(idx)
		for j, i := range idx {
			if pick.At(j) != rows[i] {
				t.Errorf("%s: Pick(%v).At(%d) = %q, want %q", name, idx, j, pick.At(j), rows[i])
			}
		}
	}
	dict, codes, ok := forms["coded"].Coded()
	if !ok || !reflect.DeepEqual(dict, []string{"a", "", "ünïcode", "b", strings.Repeat("x", 300)}) || !reflect.DeepEqual(codes, []uint32{0, 1, 2, 0, 3, 0, 4}) {
		t.Errorf("Coded = %q, %v, %v", dict, codes, ok)
	}
	if _, _, ok := forms["packed"].Coded(); ok {
		t.Error("a packed column reports itself coded")
	}
}

func TestNumbered(t *testing.T) {
	n := Numbered("line ", []uint32{2, 10, 4294967295})
	want := []string{"line 2", "line 10", "line 4294967295"}
	if got := n.Strings(); !reflect.DeepEqual(got, want) {
		t.Errorf("Numbered: %q, want %q", got, want)
	}
	if got := n.Pick([]int{1}).Strings(); !reflect.DeepEqual(got, want[1:2]) {
		t.Errorf("Numbered Pick: %q", got)
	}
}

func TestZero(t *testing.T) {
	var z Text
	if z.Len() != 0 || len(z.Strings()) != 0 {
		t.Errorf("zero Text: Len %d", z.Len())
	}
	var p Packer
	if e := p.Text(); e.Len() != 0 {
		t.Errorf("empty Packer: Len %d", e.Len())
	}
}

// The packed and coded forms cost no allocation per row.
func TestAllocations(t *testing.T) {
	line := []byte("L3")
	allocs := testing.AllocsPerRun(5, func() {
		var p Packer
		var c Coder
		p.Grow(10000, 20000)
		c.Grow(10000)
		for i := 0; i < 10000; i++ {
			p.Add(line)
			c.Add(line)
		}
		_ = p.Text()
		_ = c.Text()
	})
	if allocs > 12 {
		t.Errorf("%v allocations for 10,000 rows", allocs)
	}
}

func TestAppendSlice(t *testing.T) {
	for name, tx := range map[string]Text{"plain": Of([]string{"a", "b", "c"}), "coded": Code([]string{"a", "b", "c"})} {
		got := tx.Slice(1, 3).Append("d").Strings()
		if !reflect.DeepEqual(got, []string{"b", "c", "d"}) {
			t.Errorf("%s: Slice(1, 3).Append(d) = %q", name, got)
		}
		if tx.At(2) != "c" {
			t.Errorf("%s: Append changed the original: %q", name, tx.Strings())
		}
	}
	var z Text
	if got := z.Append("x").Strings(); !reflect.DeepEqual(got, []string{"x"}) {
		t.Errorf("zero Append: %q", got)
	}
}

// A decimal column reads back every text exactly; the first text not
// written plainly turns it into a packed column, with the earlier rows
// unchanged.
func TestDecimals(t *testing.T) {
	plain := []string{"0", "7", "-7", "100.59", "0.0001", "-0.5", "1.50", "0.00", "999999999999999999", "-12.000"}
	var d Decimals
	for _, s := range plain {
		d.Add([]byte(s))
	}
	tx := d.Text()
	if _, _, ok := tx.Decimal(); !ok {
		t.Fatal("plain decimals were not stored as numbers")
	}
	if got := tx.Strings(); !reflect.DeepEqual(got, plain) {
		t.Errorf("decimal column reads %q, want %q", got, plain)
	}
	if m, sc, _ := tx.Decimal(); m[3] != 10059 || sc[3] != 2 || m[5] != -5 || sc[5] != 1 {
		t.Errorf("100.59 and -0.5 stored as %d/%d and %d/%d", m[3], sc[3], m[5], sc[5])
	}
	if got := tx.Pick([]int{3, 0}).Strings(); !reflect.DeepEqual(got, []string{"100.59", "0"}) {
		t.Errorf("Pick: %q", got)
	}
	for _, odd := range []string{"+1", "01", ".5", "5.", "-0", "-0.0", "1e3", "1234567890123456789", " 1", "1,5", ""} {
		var d Decimals
		d.Add([]byte("2.5"))
		d.Add([]byte(odd))
		d.Add([]byte("3"))
		tx := d.Text()
		if _, _, ok := tx.Decimal(); ok {
			t.Errorf("%q: kept as a decimal column", odd)
		}
		if got := tx.Strings(); !reflect.DeepEqual(got, []string{"2.5", odd, "3"}) {
			t.Errorf("%q: reads %q", odd, got)
		}
	}
}
