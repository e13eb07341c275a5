package power

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestCovariatePowerReference compares with
// testdata/reference/covariate_power.json (gen_covariate_power.py, scipy's
// noncentral F with the variance reduced by 1 − ρ²).
func TestCovariatePowerReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/covariate_power.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Rows []struct {
			K, N                  int
			F, Rho, Lambda, Power float64
			DF2                   float64
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Rows {
		d := Design{Factors: []Factor{{Name: "g", Levels: c.K}}}
		r := d.EvaluateCovariate(c.N, c.F, 0.05, c.Rho)
		if r.DF2 != c.DF2 || math.Abs(r.Lambda-c.Lambda) > 1e-12*c.Lambda || math.Abs(r.Power-c.Power) > 1e-9 {
			t.Errorf("k %d n %d f %g ρ %g: df2 %g λ %g power %.12f; want %g %g %.12f", c.K, c.N, c.F, c.Rho, r.DF2, r.Lambda, r.Power, c.DF2, c.Lambda, c.Power)
		}
	}
	// A covariate with ρ = 0.6 needs fewer units than none.
	d := Design{Factors: []Factor{{Name: "g", Levels: 3}}}
	a, _ := d.Solve(0.25, 0.05, 0.8)
	c, err := d.SolveCovariate(0.25, 0.05, 0.8, 0.6)
	if err != nil || c.N >= a.N {
		t.Errorf("with ρ 0.6: n %d, without: %d (%v)", c.N, a.N, err)
	}
}
