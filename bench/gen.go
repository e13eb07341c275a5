package bench

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strconv"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/randomize"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// Table describes a generated plain CSV table: rows observations of a
// response y around 100 (two decimals), with factors of the given level
// counts crossed in order (the first varying slowest within a block) and
// blocks (0: none) each holding every treatment combination equally often.
type Table struct {
	Rows   int
	Levels []int
	Blocks int
	Seed   uint64
}

// Inputs returns the tables of the side-by-side benchmark, by file name.
func Inputs() map[string]Table {
	return map[string]Table{
		"oneway1e6":    {Rows: 1_000_000, Levels: []int{5}, Seed: 1},
		"factorial1e5": {Rows: 100_000, Levels: []int{3, 4, 2}, Blocks: 5, Seed: 2},
		"tukey1000":    {Rows: 1000, Levels: []int{10}, Seed: 3},
		"blocks25000":  {Rows: 100_000, Levels: []int{4}, Blocks: 25_000, Seed: 4},
	}
}

// FactorNames names the generated factor columns.
func (t Table) FactorNames() []string { return t.factorNames() }

// Names of the generated columns.
func (t Table) factorNames() []string {
	var out []string
	for i := range t.Levels {
		out = append(out, fmt.Sprintf("f%d", i+1))
	}
	return out
}

// WriteCSV writes the table to path: columns unit, block (when blocked),
// f1.., y. Treatment effects are 0.1·level of each factor, block effects
// 0.05·block, noise N(0, 1).
func (t Table) WriteCSV(path string) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<16)
	r := rand.New(rand.NewSource(t.Seed))
	w.WriteString("unit")
	if t.Blocks > 0 {
		w.WriteString(",block")
	}
	for _, n := range t.factorNames() {
		w.WriteString("," + n)
	}
	w.WriteString(",y\n")
	cells := 1
	for _, l := range t.Levels {
		cells *= l
	}
	var buf []byte
	for i := 0; i < t.Rows; i++ {
		buf = buf[:0]
		buf = append(buf, 'u')
		buf = strconv.AppendInt(buf, int64(i+1), 10)
		mean := 100.0
		c := i % cells
		if t.Blocks > 0 {
			b := (i / cells) % t.Blocks
			buf = append(buf, ",B"...)
			buf = strconv.AppendInt(buf, int64(b+1), 10)
			mean += 0.05 * float64(b)
		}
		div := cells
		for _, l := range t.Levels {
			div /= l
			lv := (c / div) % l
			buf = append(buf, ",L"...)
			buf = strconv.AppendInt(buf, int64(lv+1), 10)
			mean += 0.1 * float64(lv)
		}
		buf = append(buf, ',')
		y := math.Round((mean+r.NormFloat64())*100) / 100
		buf = strconv.AppendFloat(buf, y, 'f', 2, 64)
		buf = append(buf, '\n')
		w.Write(buf)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// BigPlan is an RCBD of 10 treatments in units/10 blocks with one response
// (0 to 1000).
func BigPlan(units int) design.Plan {
	lo, hi := 0.0, 1000.0
	return design.Plan{Title: "bench", Design: design.RCBD,
		Factors: []design.Factor{{Name: "t", Levels: []string{"a", "b", "c", "d", "e", "f", "g", "h", "i", "j"}}},
		Reps:    []int{1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, Blocks: units / 10, BlockName: "bench",
		Responses: []design.Response{{Name: "y", Min: &lo, Max: &hi}}, Seed: 1}
}

// Meta is the workbook metadata of the benchmarks.
func Meta() workbook.Meta {
	return workbook.Meta{Version: "bench", Created: time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)}
}

// WriteFilledWorkbook writes the workbook of BigPlan(units) to path with
// every response filled (500 ± 10, one decimal).
func WriteFilledWorkbook(path string, units int) error {
	l, err := randomize.Assign(BigPlan(units))
	if err != nil {
		return err
	}
	blank := path + ".blank.xlsx"
	if err := workbook.Write(blank, l, Meta(), true); err != nil {
		return err
	}
	defer os.Remove(blank)
	r := rand.New(rand.NewSource(5))
	vals := make([]float64, len(l.Units))
	for i := range vals {
		vals[i] = math.Round((500+10*r.NormFloat64())*10) / 10
	}
	return workbook.Fill(blank, path, [][]float64{vals}, "", true)
}
