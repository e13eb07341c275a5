package power

import (
	"errors"
	"math"
	"strings"
	"testing"
)

func TestComputeErrors(t *testing.T) {
	tests := []struct {
		name  string
		req   Request
		field string
	}{
		{"alpha above 1", Request{Groups: 3, F: 0.25, Alpha: 1.5}, "alpha"},
		{"power below alpha", Request{Groups: 3, F: 0.25, Power: 0.01}, "power"},
		{"power of 1", Request{Groups: 3, F: 0.25, Power: 1}, "power"},
		{"negative f", Request{Groups: 3, F: -1}, "f"},
		{"negative sd", Request{Groups: 3, Diff: 2, SD: -1}, "sd"},
		{"one group", Request{Groups: 1, F: 0.3}, "groups"},
		{"means length", Request{Groups: 3, Means: []float64{1, 2}, SD: 1}, "means"},
		{"dropout 1", Request{Groups: 3, F: 0.3, Dropout: 1}, "dropout"},
		{"unknown term", Request{Factors: []Factor{{Name: "a", Levels: 2}, {Name: "b", Levels: 3}}, Term: []string{"c"}, F: 0.3}, "term"},
		{"factorial without term", Request{Factors: []Factor{{Name: "a", Levels: 2}, {Name: "b", Levels: 3}}, F: 0.3}, "term"},
		{"no effect", Request{Groups: 3}, "f"},
		{"two effects", Request{Groups: 3, F: 0.3, Eta2: 0.1}, "eta2"},
		{"means without sd", Request{Means: []float64{1, 2, 3}}, "means"},
		{"diff without sd", Request{Groups: 3, Diff: 2}, "diff"},
		{"tiny effect is capped", Request{Groups: 3, F: 1e-5}, "f"},
		{"detect without n", Request{Groups: 3, Detect: true}, "detect"},
		{"pilot without sd", Request{Groups: 3, F: 0.3, PilotN: 8}, "pilot-n"},
		{"block share without blocks", Request{Groups: 3, Means: []float64{1, 2, 3}, SD: 1, BlockShare: 0.3}, "block-share"},
		{"one-sided F", Request{Groups: 3, F: 0.3, Sides: 1}, "sides"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Compute(tt.req)
			var fe *FieldError
			if !errors.As(err, &fe) {
				t.Fatalf("got %v, want a *FieldError", err)
			}
			if fe.Field != tt.field {
				t.Errorf("field %q (%v), want %q", fe.Field, err, tt.field)
			}
		})
	}
}

func TestComputeAnswers(t *testing.T) {
	t.Run("dropout rounds up per group", func(t *testing.T) {
		a, err := Compute(Request{Groups: 4, F: 0.4, Dropout: 0.15})
		if err != nil {
			t.Fatal(err)
		}
		want := int(math.Ceil(float64(a.N) / 0.85))
		if a.NDropout != want || a.TotalDropout != 4*want {
			t.Errorf("n %d → %d (total %d), want %d", a.N, a.NDropout, a.TotalDropout, want)
		}
	})
	t.Run("block share shrinks the SD", func(t *testing.T) {
		a, err := Compute(Request{Groups: 3, Means: []float64{10, 12, 14}, SD: 4, Blocked: true, BlockShare: 0.36})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(a.SD-3.2) > 1e-12 { // 4·sqrt(1 − 0.36)
			t.Errorf("within-block SD %g, want 3.2", a.SD)
		}
	})
	t.Run("detectable difference from f", func(t *testing.T) {
		a, err := Compute(Request{Groups: 3, N: 10, Detect: true, SD: 2})
		if err != nil {
			t.Fatal(err)
		}
		// The least favourable configuration: D = f·σ·sqrt(2k).
		if math.Abs(a.DiffDetectable-a.Detectable*2*math.Sqrt(6)) > 1e-12 || math.Abs(a.Power-0.8) > 1e-8 {
			t.Errorf("detectable f %g, D %g, power %g", a.Detectable, a.DiffDetectable, a.Power)
		}
	})
	t.Run("d selects the t test and matches TwoGroups", func(t *testing.T) {
		a, err := Compute(Request{Test: TestT, D: 0.5})
		if err != nil {
			t.Fatal(err)
		}
		r, _ := TwoGroups{Ratio: 1, Sides: 2}.Solve(0.5, 0.05, 0.8)
		if a.N != r.N1 || a.Power != r.Power {
			t.Errorf("Compute n %d power %g; TwoGroups n %d power %g", a.N, a.Power, r.N1, r.Power)
		}
	})
	t.Run("curve passes through the answer", func(t *testing.T) {
		r := Request{Groups: 4, Means: []float64{10, 12, 12, 14}, SD: 3, Power: 0.9}
		a, err := Compute(r)
		if err != nil {
			t.Fatal(err)
		}
		s, err := CurvePoints(r, a, 0.8, 1.2)
		if err != nil {
			t.Fatal(err)
		}
		for i, n := range s[0].N {
			if n == a.N && math.Abs(s[0].Power[i]-a.Power) > 1e-15 {
				t.Errorf("curve at n=%d: %g, answer %g", n, s[0].Power[i], a.Power)
			}
		}
		last := len(s[0].Power) - 1
		if len(s) != 3 || s[1].Power[last] < s[0].Power[last] || s[2].Power[last] > s[0].Power[last] {
			t.Error("SD curves out of order")
		}
		if s[1].Label != "SD 20% lower" || s[2].Label != "SD 20% higher" || !strings.Contains(s[0].Label, "means 10, 12, 12, 14") {
			t.Errorf("labels %q %q %q", s[0].Label, s[1].Label, s[2].Label)
		}
	})
}

func TestDunnettNeedsFewerUnitsThanBonferroni(t *testing.T) {
	// Dunnett's critical value is below Bonferroni's for the same family,
	// so the n it needs is never larger; with one comparison they agree.
	for _, k := range []int{2, 4, 6} {
		b, err := Compute(Request{Groups: k, Test: TestControl, Diff: 2, SD: 2, Power: 0.9})
		if err != nil {
			t.Fatal(err)
		}
		d, err := Compute(Request{Groups: k, Test: TestDunnett, Diff: 2, SD: 2, Power: 0.9})
		if err != nil {
			t.Fatal(err)
		}
		if d.N > b.N || k == 2 && (d.N != b.N || math.Abs(d.Power-b.Power) > 1e-7) {
			t.Errorf("k=%d: Dunnett n %d (power %.6f), Bonferroni n %d (power %.6f)", k, d.N, d.Power, b.N, b.Power)
		}
	}
}
