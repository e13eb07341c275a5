// Package sim simulates responses for a laid-out experiment from a planned
// model: treatment means, a residual SD, and a block SD. The demo uses it as
// a stand-in for the technician, and Monte-Carlo power will use it to
// generate data sets for the real analysis; it is the one place where
// planning reaches forward to layouts and analysis.
package sim

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// Model describes how responses arise: y = mean[treatment] + block effect +
// unit error, block effects ~ N(0, BlockSD²) and unit errors ~ N(0, SD²),
// all independent, each value rounded to Decimals places as an instrument
// would report it.
type Model struct {
	Means    []float64
	SD       float64
	BlockSD  float64
	Decimals int
}

// streamOffset keeps the simulation's random streams apart from the
// layout's (which use 1..blocks).
const streamOffset = 1 << 40

// Responses returns one simulated value per unit of l, in layout order, from
// the PCG stream of seed (see package randomize) numbered 2^40.
func Responses(l design.Layout, m Model, seed uint64) ([]float64, error) {
	if len(m.Means) != len(l.Plan.Treatments()) {
		return nil, fmt.Errorf("sim: %d means for %d treatments", len(m.Means), len(l.Plan.Treatments()))
	}
	if !(m.SD >= 0) || !(m.BlockSD >= 0) {
		return nil, fmt.Errorf("sim: SDs must be non-negative")
	}
	r := rand.New(randomize.Stream(seed, streamOffset))
	blocks := make([]float64, l.Plan.Blocks+1)
	for b := 1; b <= l.Plan.Blocks; b++ {
		blocks[b] = m.BlockSD * r.NormFloat64()
	}
	scale := math.Pow(10, float64(m.Decimals))
	out := make([]float64, len(l.Units))
	for i, u := range l.Units {
		y := m.Means[u.Treatment] + blocks[u.Block] + m.SD*r.NormFloat64()
		out[i] = math.Round(y*scale) / scale
	}
	return out, nil
}
