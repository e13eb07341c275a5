package power

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestLatinPowerReference compares with testdata/reference/latin_power.json
// (gen_latin_power.py: scipy.stats.ncf).
func TestLatinPowerReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/latin_power.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Rows []struct {
			Means              []float64
			SD                 float64
			Squares            int
			DF2, Lambda, Power float64
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Rows {
		r := LatinPlan{Means: c.Means, SD: c.SD, Alpha: 0.05}.Evaluate(c.Squares)
		if r.DF2 != c.DF2 || math.Abs(r.Lambda-c.Lambda) > 1e-12*c.Lambda || math.Abs(r.Power-c.Power) > 1e-9 {
			t.Errorf("%v S %d: df2 %g λ %g power %.12f; want %g %g %.12f", c.Means, c.Squares, r.DF2, r.Lambda, r.Power, c.DF2, c.Lambda, c.Power)
		}
	}
	p := LatinPlan{Means: []float64{10, 11, 12, 13}, SD: 1.5, Alpha: 0.05}
	s, err := p.Solve(0.9)
	if err != nil || s.Power < 0.9 || (s.Squares > 1 && p.Evaluate(s.Squares-1).Power >= 0.9) {
		t.Errorf("solve: %+v %v", s, err)
	}
	if _, err := (LatinPlan{Means: []float64{1, 2}, SD: 1, Alpha: 0.05}).Solve(0.8); err == nil {
		t.Error("a 2 × 2 square was accepted")
	}
}
