package bench

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strconv"

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
