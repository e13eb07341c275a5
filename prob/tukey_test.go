package prob

import (
	"math"
	"testing"
)

// TestRangeTable checks the interpolated W(w) against the inner quadrature
// it interpolates, at 10^4 points per K.
func TestRangeTable(t *testing.T) {
	rule := newGaussRule(16)
	nodes := newRangeNodes(rule)
	for _, k := range []float64{2, 3, 5, 10, 30, 100} {
		tab := newRangeTable(nodes, k)
		var worst float64
		for i := 0; i < 10000; i++ {
			w := tab.wMax * 1.05 * (float64(i) + 0.37) / 10000
			want := clamp01(nodes.rangeCDF(w, k))
			worst = math.Max(worst, math.Abs(tab.at(w)-want))
		}
		if worst > 1e-14 {
			t.Errorf("K=%g: worst |table − quadrature| %.2e, want ≤ 1e-14", k, worst)
		}
		t.Logf("K=%g: wMax %.1f, worst error %.2e", k, tab.wMax, worst)
	}
}

// TestPreparedRange checks that the prepared distribution gives its
// unprepared values, for the reuse in post-hoc families.
func TestPreparedRange(t *testing.T) {
	for _, d := range []StudentizedRange{{K: 10, Nu: 990}, {K: 3, Nu: 5}, {K: 4, Nu: math.Inf(1)}, {K: 2.5, Nu: 12}} {
		p := d.Prepare()
		for _, q := range []float64{0.5, 2, 3.5, 6} {
			if a, b := p.CDF(q), d.CDF(q); a != b {
				t.Errorf("%+v: CDF(%g) prepared %.17g, %.17g", d, q, a, b)
			}
		}
		if a, b := p.Quantile(0.95), d.Quantile(0.95); a != b {
			t.Errorf("%+v: quantile prepared %.17g, %.17g", d, a, b)
		}
	}
	if (StudentizedRange{K: 1, Nu: 3}).Prepare() != nil {
		t.Error("K=1 prepared")
	}
}

func BenchmarkStudentizedRange(b *testing.B) {
	d := StudentizedRange{K: 10, Nu: 990}
	b.Run("CDF", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			d.Survival(3.1)
		}
	})
	b.Run("Quantile", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			d.Quantile(0.95)
		}
	})
	p := d.Prepare()
	b.Run("prepared/CDF", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			p.Survival(3.1)
		}
	})
	b.Run("prepared/Quantile", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			p.Quantile(0.95)
		}
	})
}

// The prepared upper tail (a table of log(1 − W)) agrees with the direct
// quadrature of StudentizedRange.Survival, relatively, from the centre of
// the distribution far into the tail; the mpmath values of
// testdata/reference/tails_mpmath.tsv are checked through it in
// TestUpperTailsMpmath.
func TestPreparedSurvival(t *testing.T) {
	for _, k := range []float64{2, 3, 10, 40} {
		for _, nu := range []float64{3, 12, 120, math.Inf(1)} {
			d := StudentizedRange{K: k, Nu: nu}
			p := d.Prepare()
			for _, q := range []float64{0.3, 1.5, 3, 5, 8, 14} {
				want := d.Survival(q)
				got := p.Survival(q)
				if want < 1e-15 {
					continue
				}
				if !close(got, want, 1e-11, 0) {
					t.Errorf("K=%g ν=%g q=%g: prepared %.15g, direct %.15g (rel %.2g)", k, nu, q, got, want, math.Abs(got-want)/want)
				}
			}
		}
	}
}
