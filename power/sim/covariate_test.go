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

// TestCovariatePowerBySimulation: the rejection rate of allot's analysis of
// covariance on data with a baseline covariate correlated ρ = 0.6 with the
// outcome agrees with power.EvaluateCovariate within 3 Monte-Carlo SE.
func TestCovariatePowerBySimulation(t *testing.T) {
	sims := 1000
	if testing.Short() {
		sims = 200
	}
	const k, n, rho = 3, 8, 0.6
	means := []float64{0, 0.3, 0.6} // SD 1 without the covariate
	var grand, ss float64
	for _, m := range means {
		grand += m / k
	}
	for _, m := range means {
		ss += (m - grand) * (m - grand) / k
	}
	f := math.Sqrt(ss)
	exact := power.Design{Factors: []power.Factor{{Name: "g", Levels: k}}}.EvaluateCovariate(n, f, 0.05, rho)
	r := rand.New(rand.NewSource(9))
	hits := 0
	for s := 0; s < sims; s++ {
		d := analyze.Data{Response: "y", Factors: []analyze.Column{{Name: "g"}}}
		var x []string
		for g := 0; g < k; g++ {
			for i := 0; i < n; i++ {
				z := r.NormFloat64()
				y := means[g] + rho*z + math.Sqrt(1-rho*rho)*r.NormFloat64()
				x = append(x, strconv.FormatFloat(z, 'g', -1, 64))
				d.Values = d.Values.Append(strconv.FormatFloat(y, 'g', -1, 64))
				d.Factors[0].Values = d.Factors[0].Values.Append(strconv.Itoa(g))
			}
		}
		res, err := analyze.ANCOVATests(d, "x", x, analyze.Options{})
		if err != nil {
			t.Fatal(err)
		}
		if res.Terms[1].P < 0.05 {
			hits++
		}
	}
	p := float64(hits) / float64(sims)
	se := math.Sqrt(exact.Power * (1 - exact.Power) / float64(sims))
	if math.Abs(p-exact.Power) > 3*se {
		t.Errorf("simulated %.3f, exact %.4f ± %.3f", p, exact.Power, se)
	}
	t.Logf("simulated %.3f, exact %.4f (SE %.3f)", p, exact.Power, se)
}
