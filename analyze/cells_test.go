package analyze

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"

	"github.com/allotproject/allot/column"
)

// blockData is an unbalanced block design: blocks of every treatment
// combination of levels, with units lost at random.
func blockData(blocks int, levels []int, lose float64, seed uint64) Data {
	r := rand.New(rand.NewSource(seed))
	d := Data{Response: "y", Block: &Column{Name: "block"}}
	for i := range levels {
		d.Factors = append(d.Factors, Column{Name: fmt.Sprintf("F%d", i+1)})
	}
	cells := 1
	for _, l := range levels {
		cells *= l
	}
	for b := 0; b < blocks; b++ {
		kept := 0
		for c := 0; c < cells; c++ {
			if r.Float64() < lose && kept+cells-c-1 >= 2 {
				continue
			}
			kept++
			d.Block.Values = d.Block.Values.Append("b" + strconv.Itoa(b))
			div := cells
			mean := 20 + 0.3*float64(b%7)
			for f, l := range levels {
				div /= l
				lv := c / div % l
				d.Factors[f].Values = d.Factors[f].Values.Append("L" + strconv.Itoa(lv))
				mean += float64(lv) * float64(f+1) * 0.4
			}
			d.Values = d.Values.Append(strconv.FormatFloat(mean+r.NormFloat64(), 'f', 3, 64))
		}
	}
	return d
}

// TestAbsorbedBlocks checks the absorbed-block fit against the fit with
// coded block columns (the same least-squares problem solved two ways) on
// unbalanced designs: every sum of squares, residual, leverage and
// least-squares mean to 1e-9.
func TestAbsorbedBlocks(t *testing.T) {
	close := func(a, b float64) bool {
		return math.Abs(a-b) <= 1e-9*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
	}
	for _, tt := range []struct {
		name   string
		blocks int
		levels []int
		lose   float64
	}{
		{"rcbd 4 treatments", 40, []int{4}, 0.15},
		{"factorial 3x2 in blocks", 30, []int{3, 2}, 0.2},
		{"complete 2x2x2 in blocks", 12, []int{2, 2, 2}, 0},
	} {
		d := blockData(tt.blocks, tt.levels, tt.lose, 7)
		for ss := 1; ss <= 3; ss++ {
			t.Run(fmt.Sprintf("%s/type %d", tt.name, ss), func(t *testing.T) {
				coded, err := fit(d, Options{SSType: ss}, math.MaxInt)
				if err != nil {
					t.Fatal(err)
				}
				abs, err := fit(d, Options{SSType: ss}, 2)
				if err != nil {
					t.Fatal(err)
				}
				if !abs.est.absorbedCheck() {
					t.Fatal("blocks were not absorbed")
				}
				for k := range coded.Terms {
					if a, b := abs.Terms[k].SS, coded.Terms[k].SS; !close(a, b) {
						t.Errorf("%s: SS %.12g absorbed, %.12g coded", coded.Terms[k].Source, a, b)
					}
				}
				if a, b := abs.Residual.SS, coded.Residual.SS; !close(a, b) || abs.Residual.DF != coded.Residual.DF {
					t.Errorf("residual SS %.12g, %.12g", a, b)
				}
				for i := range coded.N {
					if !close(abs.ResidualAt(i), coded.ResidualAt(i)) || !close(abs.LeverageAt(i), coded.LeverageAt(i)) {
						t.Fatalf("unit %d: residual %g, %g; leverage %g, %g", i, abs.ResidualAt(i), coded.ResidualAt(i), abs.LeverageAt(i), coded.LeverageAt(i))
					}
				}
				for fi := range d.Factors {
					la, lc := abs.LSMeans(fi), coded.LSMeans(fi)
					for l := range lc {
						if !close(la[l].Mean, lc[l].Mean) || !close(la[l].SE, lc[l].SE) {
							t.Errorf("factor %d level %d: LS mean %g ± %g absorbed, %g ± %g coded", fi, l, la[l].Mean, la[l].SE, lc[l].Mean, lc[l].SE)
						}
						if a, b := abs.DiffSE(fi, 0, l), coded.DiffSE(fi, 0, l); !close(a, b) {
							t.Errorf("factor %d: SE of difference %g, %g", fi, a, b)
						}
					}
				}
				if len(d.Factors) >= 2 {
					ca, cc := abs.LSCells(), coded.LSCells()
					for k := range cc {
						if !close(ca[k].Mean, cc[k].Mean) || !close(ca[k].SE, cc[k].SE) {
							t.Errorf("cell %s: %g ± %g, %g ± %g", cc[k].Level, ca[k].Mean, ca[k].SE, cc[k].Mean, cc[k].SE)
						}
					}
				}
			})
		}
	}
}

// TestExactCellSums checks the exact cell statistics against the float
// two-pass ones on data with large offsets, where the naive one-pass
// formula n·Σy² − (Σy)² would lose every digit.
func TestExactCellSums(t *testing.T) {
	vals := []string{"1000000000000.4", "1000000000000.3", "1000000000000.5", "1000000000000.2", "1000000000000.6", "999999999999.9", "1000000000000.1", "1000000000000.7", "-3e-2", "12.5"}
	grp := []string{"a", "a", "a", "b", "b", "b", "c", "c", "c", "c"}
	d := Data{Response: "y", Values: column.Of(vals), Factors: []Column{{Name: "g", Values: column.Of(grp)}}}
	m, err := buildModel(d)
	if err != nil {
		t.Fatal(err)
	}
	if m.ints == nil {
		t.Fatal("no exact centring for decimal data")
	}
	exact := m.collapse()
	ints := m.ints
	m.ints = nil
	float := m.collapse()
	m.ints = ints
	for c := range exact.n {
		if !close12(exact.mean[c], float.mean[c]) || !close12(exact.within[c], float.within[c]) {
			t.Errorf("cell %d: mean %.17g / %.17g, within %.17g / %.17g", c, exact.mean[c], float.mean[c], exact.within[c], float.within[c])
		}
	}
	// Cell a: 1e12 + {0.4, 0.3, 0.5}: SS = 0.02 exactly.
	if exact.within[0] != 0.02 {
		t.Errorf("within SS of cell a %.17g, want 0.02", exact.within[0])
	}
}

func close12(a, b float64) bool {
	return math.Abs(a-b) <= 1e-12*math.Max(1, math.Abs(b))
}

func TestMedianIndex(t *testing.T) {
	r := rand.New(rand.NewSource(3))
	for _, n := range []int{1, 2, 3, 10, 101, 1000} {
		for rep := 0; rep < 20; rep++ {
			x := make([]float64, n)
			for i := range x {
				x[i] = float64(r.Intn(5)) // many ties
			}
			got := medianIndex(x)
			// The stable sort's element n/2.
			idx := make([]int, n)
			for i := range idx {
				idx[i] = i
			}
			for i := 1; i < n; i++ {
				for j := i; j > 0 && x[idx[j]] < x[idx[j-1]]; j-- {
					idx[j], idx[j-1] = idx[j-1], idx[j]
				}
			}
			if want := idx[n/2]; got != want {
				t.Fatalf("n=%d: median index %d, want %d (%v)", n, got, want, x)
			}
		}
	}
}

// TestAbsorbedEmptyCells: with a treatment combination missing from every
// block, the pruned model (dependent interaction columns removed) is the
// same whether the blocks are coded or absorbed: the same df and Type I
// and II sums of squares, and Type III marks the same terms untestable.
func TestAbsorbedEmptyCells(t *testing.T) {
	full := blockData(20, []int{3, 2}, 0.1, 11)
	var d Data
	d.Response, d.Block = full.Response, &Column{Name: "block"}
	d.Factors = []Column{{Name: "F1"}, {Name: "F2"}}
	for i, v := range full.Values.Strings() {
		if full.Factors[0].Values.At(i) == "L2" && full.Factors[1].Values.At(i) == "L1" {
			continue // the cell L2 × L1 is empty throughout
		}
		d.Values = d.Values.Append(v)
		d.Block.Values = d.Block.Values.Append(full.Block.Values.At(i))
		for f := range d.Factors {
			d.Factors[f].Values = d.Factors[f].Values.Append(full.Factors[f].Values.At(i))
		}
	}
	for ss := 1; ss <= 3; ss++ {
		coded, err := fit(d, Options{SSType: ss}, math.MaxInt)
		if err != nil {
			t.Fatal(err)
		}
		abs, err := fit(d, Options{SSType: ss}, 2)
		if err != nil {
			t.Fatal(err)
		}
		if !coded.EmptyCells || !abs.EmptyCells {
			t.Fatalf("type %d: empty cells not detected (coded %v, absorbed %v)", ss, coded.EmptyCells, abs.EmptyCells)
		}
		if len(abs.Terms) != len(coded.Terms) || abs.Residual.DF != coded.Residual.DF {
			t.Fatalf("type %d: %d terms, residual df %d absorbed; %d, %d coded", ss, len(abs.Terms), abs.Residual.DF, len(coded.Terms), coded.Residual.DF)
		}
		for k, c := range coded.Terms {
			a := abs.Terms[k]
			if a.DF != c.DF || (a.NotTestable == "") != (c.NotTestable == "") {
				t.Errorf("type %d %s: df %d/%d, untestable %q/%q", ss, c.Source, a.DF, c.DF, a.NotTestable, c.NotTestable)
			}
			if c.NotTestable == "" && math.Abs(a.SS-c.SS) > 1e-9*math.Max(1, c.SS) {
				t.Errorf("type %d %s: SS %.12g absorbed, %.12g coded", ss, c.Source, a.SS, c.SS)
			}
		}
		if math.Abs(abs.Residual.SS-coded.Residual.SS) > 1e-9*coded.Residual.SS {
			t.Errorf("type %d: residual SS %.12g, %.12g", ss, abs.Residual.SS, coded.Residual.SS)
		}
	}
}

// TestLargeRCBDLevene: the Monte-Carlo Levene p-value of complete block
// designs is simulated up to mcLeveneUnits units; a larger design keeps the
// (conservative) F reference and says so, so that its cost stays linear.
func TestLargeRCBDLevene(t *testing.T) {
	for _, tt := range []struct {
		blocks int
		mc     bool
	}{{10, true}, {mcLeveneUnits/4 + 1, false}} {
		res, err := Run(blockData(tt.blocks, []int{4}, 0, 5), RunOptions{})
		if err != nil {
			t.Fatal(err)
		}
		name := res.Assumptions.LeveneName
		if got := strings.Contains(name, "null draws"); got != tt.mc {
			t.Errorf("%d blocks: variance test %q", tt.blocks, name)
		}
		if !(res.Assumptions.LeveneP > 0 && res.Assumptions.LeveneP <= 1) {
			t.Errorf("%d blocks: p = %g", tt.blocks, res.Assumptions.LeveneP)
		}
	}
}
