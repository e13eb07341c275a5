package sim

import (
	"context"
	"math"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/power"
)

// TestGLMAgreesWithExact: without overdispersion, blocks or losses, the
// simulated power of the GLM's likelihood-ratio test (allot's own FitGLM on
// each data set) agrees within 3 Monte-Carlo SE with the exact power by
// enumeration (power.GLMPlan, itself checked against scipy and a
// statsmodels Monte Carlo in power/glm_test.go); the power as analysed
// (quasi-likelihood F when the dispersion exceeds 1) is not above it.
func TestGLMAgreesWithExact(t *testing.T) {
	sims := 1500
	if testing.Short() {
		sims = 300
	}
	for _, tc := range []struct {
		fam    string
		means  []float64
		trials int
		n      int
	}{
		{analyze.FamilyBinomial, []float64{0.5, 0.7}, 10, 5},
		{analyze.FamilyPoisson, []float64{3, 5, 4}, 0, 5},
	} {
		f := design.Factor{Name: "trt", Levels: Levels(len(tc.means))}
		l := layout(t, design.CRD, 1, ones(len(tc.means), tc.n), f)
		r, err := RunGLM(context.Background(), GLMSpec{Layout: l, Family: tc.fam, Means: tc.means, Trials: tc.trials, Alpha: 0.05, Sims: sims, Seed: 11})
		if err != nil {
			t.Fatal(err)
		}
		exact := power.GLMPlan{Family: tc.fam, Means: tc.means, Trials: tc.trials, Alpha: 0.05}.Evaluate(tc.n)
		got, asRun := r.Terms[0], r.Terms[1]
		if math.Abs(got.P-exact.Power) > 3*got.SE {
			t.Errorf("%s %v: simulated %.3f ± %.3f, exact %.3f", tc.fam, tc.means, got.P, got.SE, exact.Power)
		}
		if asRun.P > got.P {
			t.Errorf("%s %v: power as analysed %.3f above the χ² test's %.3f", tc.fam, tc.means, asRun.P, got.P)
		}
		t.Logf("%s %v n %d: simulated %.3f ± %.3f (as analysed %.3f), exact %.3f", tc.fam, tc.means, tc.n, got.P, got.SE, asRun.P, exact.Power)
	}
}

// TestGLMTypeIOverdispersed: with equal means in blocks and overdispersed
// units, the analysis' rejection rate stays near alpha (the quasi-likelihood
// F test absorbs the extra variation), within 3 SE plus 0.02 for the F
// approximation.
func TestGLMTypeIOverdispersed(t *testing.T) {
	sims := 1000
	if testing.Short() {
		sims = 200
	}
	f := design.Factor{Name: "trt", Levels: Levels(3)}
	l := layout(t, design.RCBD, 6, ones(3, 1), f)
	r, err := RunGLM(context.Background(), GLMSpec{Layout: l, Family: analyze.FamilyPoisson, Means: []float64{6, 6, 6},
		BlockSD: 0.3, Overdispersion: 0.3, Alpha: 0.05, Sims: sims, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	trt := r.Terms[len(r.Terms)-1] // the treatment term as analysed
	if math.Abs(trt.P-0.05) > 3*math.Sqrt(0.05*0.95/float64(sims))+0.02 {
		t.Errorf("type I error %.3f ± %.3f", trt.P, trt.SE)
	}
	t.Logf("type I error %.3f ± %.3f (%d failed)", trt.P, trt.SE, r.Failed)
}

func TestGLMSpecRefuses(t *testing.T) {
	l := layout(t, design.CRD, 1, ones(2, 3), design.Factor{Name: "trt", Levels: Levels(2)})
	for _, s := range []GLMSpec{
		{Family: analyze.FamilyBinomial, Means: []float64{0.5, 0.6}, Alpha: 0.05, Sims: 10},
		{Family: analyze.FamilyBinomial, Means: []float64{0.5, 1.2}, Trials: 5, Alpha: 0.05, Sims: 10},
		{Family: analyze.FamilyPoisson, Means: []float64{1}, Alpha: 0.05, Sims: 10},
		{Family: analyze.FamilyPoisson, Means: []float64{1, 2}, Alpha: 0.05, Sims: 10, Overdispersion: math.Inf(1)},
		{Family: "gamma", Means: []float64{1, 2}, Alpha: 0.05, Sims: 10},
	} {
		s.Layout = l
		if _, err := RunGLM(context.Background(), s); err == nil {
			t.Errorf("%+v accepted", s)
		}
	}
}
