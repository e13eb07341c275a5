package analyze

import (
	"strconv"
	"testing"

	"github.com/allotproject/allot/column"
)

// The engine's sums of squares equal Fit's on every reference design.
func TestEngineMatchesFit(t *testing.T) {
	for _, c := range loadRef(t) {
		d := c.data()
		for _, typ := range []int{1, 2, 3} {
			e, err := NewEngine(d, typ)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := Fit(d, Options{SSType: typ})
			if err != nil {
				t.Fatal(err)
			}
			y := make([]float64, d.Values.Len())
			for i, v := range d.Values.Strings() {
				y[i], _ = strconv.ParseFloat(v, 64)
			}
			got, err := e.Fit(y, nil)
			if err != nil {
				t.Fatal(err)
			}
			for k, term := range tab.Terms {
				if !near(got.SS[k], term.SS, 1e-9, 1e-9) || got.DF[k] != term.DF {
					t.Errorf("%s type %d %s: SS %g df %d, Fit %g df %d", c.Name, typ, term.Source, got.SS[k], got.DF[k], term.SS, term.DF)
				}
			}
			if !near(got.ResSS, tab.Residual.SS, 1e-9, 1e-9) || got.ResDF != tab.Residual.DF {
				t.Errorf("%s: residual %g/%d, Fit %g/%d", c.Name, got.ResSS, got.ResDF, tab.Residual.SS, tab.Residual.DF)
			}
			// Dropping a unit gives the same as fitting the smaller data.
			keep := make([]bool, len(y))
			for i := range keep {
				keep[i] = i != 1
			}
			sub := d
			sub.Values = column.Of(append(d.Values.Slice(0, 1).Strings(), d.Values.Slice(2, d.Values.Len()).Strings()...))
			sub.Factors = nil
			for _, f := range d.Factors {
				f.Values = column.Of(append(f.Values.Slice(0, 1).Strings(), f.Values.Slice(2, f.Values.Len()).Strings()...))
				sub.Factors = append(sub.Factors, f)
			}
			if d.Block != nil {
				b := *d.Block
				b.Values = column.Of(append(b.Values.Slice(0, 1).Strings(), b.Values.Slice(2, b.Values.Len()).Strings()...))
				sub.Block = &b
			}
			want, err := Fit(sub, Options{SSType: typ})
			got2, err2 := e.Fit(y, keep)
			if (err == nil) != (err2 == nil) {
				t.Errorf("%s: Fit error %v, engine %v", c.Name, err, err2)
				continue
			}
			if err == nil && !near(got2.ResSS, want.Residual.SS, 1e-9, 1e-9) {
				t.Errorf("%s without unit 2: residual %g, Fit %g", c.Name, got2.ResSS, want.Residual.SS)
			}
		}
	}
}
