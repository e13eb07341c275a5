package randomize

import (
	"github.com/allotproject/allot/design"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// subPlotStream is the stream offset of step 9's sub-plot shuffles.
const subPlotStream = 1 << 36

// assignStrata lays out block b of a split plot (step 9) or square b of a
// Latin plan (step 10), with a measurement order (step 5) when planned.
func assignStrata(p design.Plan, b int) []design.Unit {
	src := Stream(p.Seed, uint64(b))
	var units []design.Unit
	if p.Design == design.Latin {
		units = latinSquare(p, b, src)
	} else {
		units = splitPlotBlock(p, b, src)
	}
	size := len(units)
	if p.Order {
		order := make([]int, size)
		for k := range order {
			order[k] = k + 1
		}
		Shuffle(Stream(p.Seed, orderStream+uint64(b)), order)
		for k := range units {
			units[k].Order = order[k]
		}
	}
	for k := range units {
		units[k].ID = design.UnitID(b, units[k].Position, size)
	}
	return units
}

func splitPlotBlock(p design.Plan, b int, src rand.Source) []design.Unit {
	a, c, r := p.WholePlotTreatments(), p.SubPlotTreatments(), p.Reps[0]
	m := a * r
	whole := make([]int, 0, m)
	for i := 0; i < a; i++ {
		for k := 0; k < r; k++ {
			whole = append(whole, i)
		}
	}
	Shuffle(src, whole)
	units := make([]design.Unit, 0, m*c)
	sub := make([]int, c)
	for k, i := range whole {
		g := (b-1)*m + k + 1
		for j := range sub {
			sub[j] = j
		}
		Shuffle(Stream(p.Seed, subPlotStream+uint64(g)), sub)
		for j, s := range sub {
			units = append(units, design.Unit{Block: b, Position: k*c + j + 1, Treatment: i*c + s, MainPlot: g})
		}
	}
	return units
}

func latinSquare(p design.Plan, b int, src rand.Source) []design.Unit {
	t := p.NumTreatments()
	perm := func() []int {
		s := make([]int, t)
		for i := range s {
			s[i] = i
		}
		Shuffle(src, s)
		return s
	}
	rows, cols, syms := perm(), perm(), perm()
	units := make([]design.Unit, 0, t*t)
	for i := 0; i < t; i++ {
		for j := 0; j < t; j++ {
			units = append(units, design.Unit{Block: b, Position: i*t + j + 1, Row: i + 1, Col: j + 1, Treatment: syms[(rows[i]+cols[j])%t]})
		}
	}
	return units
}
