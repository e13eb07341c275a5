package sim

import (
	"context"
	"math"
	"testing"

	"github.com/allotproject/allot/power"
)

// TestSplitPlotAgreesWithExact: the rejection rates of allot's two-stratum
// analysis on simulated split plots agree with the exact noncentral-F
// power of power.SplitPlotPlan (itself checked against scipy) within 3
// Monte-Carlo SE, for each of the three tests.
func TestSplitPlotAgreesWithExact(t *testing.T) {
	sims := 1500
	if testing.Short() {
		sims = 300
	}
	p := power.SplitPlotPlan{A: 3, B: 3, Means: []float64{10, 10.6, 11.2, 10.8, 11.2, 12, 11, 11.8, 12.9}, SDMain: 1, SDSub: 0.8, Blocked: true, Alpha: 0.05}
	r, err := RunSplitPlot(context.Background(), SplitPlotSpec{Plan: p, R: 4, Sims: sims, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	for k, ex := range p.Evaluate(4) {
		got := r.Terms[k]
		if math.Abs(got.P-ex.Power) > 3*math.Sqrt(ex.Power*(1-ex.Power)/float64(sims)) {
			t.Errorf("%s: simulated %.3f ± %.3f, exact %.4f", ex.Term, got.P, got.SE, ex.Power)
		}
		t.Logf("%s: simulated %.3f ± %.3f, exact %.4f", ex.Term, got.P, got.SE, ex.Power)
	}
	// With losses the REML path runs and the power drops.
	if testing.Short() {
		return
	}
	rl, err := RunSplitPlot(context.Background(), SplitPlotSpec{Plan: p, R: 4, Dropout: 0.1, Sims: 200, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	if rl.Failed > 0 || rl.MeanLost == 0 {
		t.Errorf("losses: %d failed, %.2f lost per data set", rl.Failed, rl.MeanLost)
	}
	t.Logf("with 10%% losses: %+v", rl.Terms)
}
