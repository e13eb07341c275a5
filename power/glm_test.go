package power

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"github.com/allotproject/allot/prob"
)

type glmPowerRef struct {
	Cases []struct {
		Family                string
		Means                 []float64
		Trials, N             int
		Alpha                 float64
		Exact, Lambda, Approx float64
	}
	MonteCarlo []struct {
		Family           string
		Means            []float64
		Trials, N        int
		Alpha, Power, SE float64
	}
}

func loadGLMPower(t *testing.T) glmPowerRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/reference/glm_power.json")
	if err != nil {
		t.Fatal(err)
	}
	var r glmPowerRef
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return r
}

// TestGLMPowerReference compares with testdata/reference/glm_power.json
// (gen_glm_power.py): an independent full enumeration with scipy's binomial
// and Poisson probabilities, and scipy.stats.ncx2 for the approximation.
func TestGLMPowerReference(t *testing.T) {
	for _, c := range loadGLMPower(t).Cases {
		p := GLMPlan{Family: c.Family, Means: c.Means, Trials: c.Trials, Alpha: c.Alpha}
		if err := p.Validate(); err != nil {
			t.Fatal(err)
		}
		r := p.Evaluate(c.N)
		if r.Method != GLMExact {
			t.Fatalf("%v: method %s, want exact", c.Means, r.Method)
		}
		if math.Abs(r.Power-c.Exact) > 1e-10 {
			t.Errorf("%s %v n %d: exact power %.12f, want %.12f", c.Family, c.Means, c.N, r.Power, c.Exact)
		}
		if math.Abs(r.Lambda-c.Lambda) > 1e-12*c.Lambda {
			t.Errorf("%s %v: λ %.14g, want %.14g", c.Family, c.Means, r.Lambda, c.Lambda)
		}
		approx := prob.NoncentralChiSquared{K: float64(r.DF), Lambda: r.Lambda}.Survival(r.Crit)
		if math.Abs(approx-c.Approx) > 1e-10 {
			t.Errorf("%s %v: approximate power %.12f, want %.12f", c.Family, c.Means, approx, c.Approx)
		}
	}
}

// TestGLMPowerMonteCarlo: the exact power is the rejection rate of
// statsmodels' GLM deviance test on simulated data (10000 data sets per
// case, gen_glm_power.py), within 3 Monte-Carlo standard errors.
func TestGLMPowerMonteCarlo(t *testing.T) {
	for _, c := range loadGLMPower(t).MonteCarlo {
		r := GLMPlan{Family: c.Family, Means: c.Means, Trials: c.Trials, Alpha: c.Alpha}.Evaluate(c.N)
		if math.Abs(r.Power-c.Power) > 3*c.SE {
			t.Errorf("%s %v: exact %.4f, simulated %.4f ± %.4f", c.Family, c.Means, r.Power, c.Power, c.SE)
		}
	}
}

func TestGLMSolve(t *testing.T) {
	for _, p := range []GLMPlan{
		{Family: FamilyBinomial, Means: []float64{0.6, 0.75}, Trials: 50, Alpha: 0.05},
		{Family: FamilyBinomial, Means: []float64{0.2, 0.35, 0.3}, Trials: 1, Alpha: 0.05},
		{Family: FamilyPoisson, Means: []float64{4, 6}, Alpha: 0.05},
		{Family: FamilyPoisson, Means: []float64{1.2, 1.5, 2.0, 1.2}, Alpha: 0.01},
	} {
		r, err := p.Solve(0.8)
		if err != nil {
			t.Fatal(err)
		}
		if r.Power < 0.8 {
			t.Errorf("%v: n %d has power %.4f", p.Means, r.N, r.Power)
		}
		if r.N > 2 {
			if q := p.Evaluate(r.N - 1); q.Power >= 0.8 {
				t.Errorf("%v: n %d − 1 already has power %.4f", p.Means, r.N, q.Power)
			}
		}
		t.Logf("%s %v: n %d per group, power %.4f (%s)", p.Family, p.Means, r.N, r.Power, r.Method)
	}
}

func TestGLMPlanRefuses(t *testing.T) {
	for _, p := range []GLMPlan{
		{Family: FamilyBinomial, Means: []float64{0.6, 1}, Trials: 5, Alpha: 0.05},
		{Family: FamilyBinomial, Means: []float64{0.6, 0.7}, Alpha: 0.05},
		{Family: FamilyPoisson, Means: []float64{2, 2}, Alpha: 0.05},
		{Family: FamilyPoisson, Means: []float64{2}, Alpha: 0.05},
		{Family: "normal", Means: []float64{2, 3}, Alpha: 0.05},
		{Family: FamilyPoisson, Means: []float64{2, 3}, Alpha: 0},
	} {
		if _, err := p.Solve(0.8); err == nil {
			t.Errorf("%+v accepted", p)
		}
	}
}
