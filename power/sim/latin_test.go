package sim

import (
	"math"
	"strconv"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/power"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// TestLatinPowerBySimulation: allot's analysis of simulated 4 × 4 Latin
// squares (row and column effects, treatment means 10..13, SD 1.5) rejects
// as often as power.LatinPlan's exact power says, within 3 Monte-Carlo SE.
func TestLatinPowerBySimulation(t *testing.T) {
	sims := 1000
	if testing.Short() {
		sims = 200
	}
	p := power.LatinPlan{Means: []float64{10, 11, 12, 13}, SD: 1.5, Alpha: 0.05}
	const tt, squares = 4, 2
	exact := p.Evaluate(squares)
	r := rand.New(rand.NewSource(13))
	hits := 0
	for s := 0; s < sims; s++ {
		d := analyze.LatinData{Response: "y", Row: analyze.Column{Name: "row"}, Col: analyze.Column{Name: "column"},
			Treatment: analyze.Column{Name: "trt"}, Square: &analyze.Column{Name: "square"}}
		for q := 0; q < squares; q++ {
			var re, ce [tt]float64
			for i := range re {
				re[i], ce[i] = r.NormFloat64(), r.NormFloat64()
			}
			for i := 0; i < tt; i++ {
				for j := 0; j < tt; j++ {
					k := (i + j + q) % tt
					y := p.Means[k] + re[i] + ce[j] + p.SD*r.NormFloat64()
					d.Values = append(d.Values, strconv.FormatFloat(y, 'g', -1, 64))
					d.Row.Values = d.Row.Values.Append(strconv.Itoa(i))
					d.Col.Values = d.Col.Values.Append(strconv.Itoa(j))
					d.Treatment.Values = d.Treatment.Values.Append(strconv.Itoa(k))
					d.Square.Values = d.Square.Values.Append(strconv.Itoa(q))
				}
			}
		}
		res, err := analyze.LatinSquareANOVA(d)
		if err != nil {
			t.Fatal(err)
		}
		if res.Terms[len(res.Terms)-1].P < 0.05 {
			hits++
		}
	}
	got := float64(hits) / float64(sims)
	se := math.Sqrt(exact.Power * (1 - exact.Power) / float64(sims))
	if math.Abs(got-exact.Power) > 3*se {
		t.Errorf("simulated %.3f, exact %.4f ± %.3f", got, exact.Power, se)
	}
	t.Logf("simulated %.3f, exact %.4f (SE %.3f)", got, exact.Power, se)
}
