package prob

import (
	"math"
	"testing"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
	"gonum.org/v1/gonum/stat/distuv"
)

func equalLambda(p int) []float64 {
	l := make([]float64, p)
	for i := range l {
		l[i] = math.Sqrt(0.5)
	}
	return l
}

func TestDunnettTable(t *testing.T) {
	// Two-sided 5% critical values for p treatments against one control,
	// equal groups (Dunnett 1955 and its 1964 extension, Biometrics 20,
	// 482–491, Table II; from memory, two decimals).
	tests := []struct {
		p    int
		nu   float64
		want float64
	}{
		{2, math.Inf(1), 2.21}, {3, math.Inf(1), 2.35}, {4, math.Inf(1), 2.44}, {5, math.Inf(1), 2.51},
		{2, 10, 2.57}, {3, 10, 2.76}, {4, 10, 2.89},
	}
	for _, tt := range tests {
		got := Dunnett{Lambda: equalLambda(tt.p), Nu: tt.nu, Sides: 2}.Quantile(0.95)
		if math.Abs(got-tt.want) > 0.005+1e-9 {
			t.Errorf("p=%d ν=%g: %.4f, table %.2f", tt.p, tt.nu, got, tt.want)
		}
	}
}

func TestDunnettOneComparisonIsT(t *testing.T) {
	// With one treatment, max|T| is |T| and the critical value is t's.
	for _, nu := range []float64{5, 12, 40} {
		st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nu}
		for _, sides := range []int{1, 2} {
			got := Dunnett{Lambda: []float64{math.Sqrt(0.5)}, Nu: nu, Sides: sides}.Quantile(0.95)
			want := st.Quantile(0.95)
			if sides == 2 {
				want = st.Quantile(0.975)
			}
			if math.Abs(got-want) > 1e-8 {
				t.Errorf("ν=%g sides=%d: %.10f, t quantile %.10f", nu, sides, got, want)
			}
		}
	}
}

func TestDunnettMonteCarlo(t *testing.T) {
	// Unequal groups: control 8, treatments 4, 6, 10; ν = 24. Simulate the
	// statistic directly and compare P(max|T| ≤ 2.6) within 3 SE.
	n0, ns, nu := 8.0, []float64{4, 6, 10}, 24.0
	var lam []float64
	for _, n := range ns {
		lam = append(lam, math.Sqrt(n/(n+n0)))
	}
	const c = 2.6
	want := Dunnett{Lambda: lam, Nu: nu, Sides: 2}.CDF(c)
	r := rand.New(rand.NewSource(42))
	chi := distuv.ChiSquared{K: nu, Src: rand.NewSource(43)}
	const sims = 200000
	hits := 0
	for i := 0; i < sims; i++ {
		s := math.Sqrt(chi.Rand() / nu)
		z0 := r.NormFloat64() / math.Sqrt(n0)
		ok := true
		for _, n := range ns {
			zi := r.NormFloat64() / math.Sqrt(n)
			if math.Abs(zi-z0)/(s*math.Sqrt(1/n+1/n0)) > c {
				ok = false
				break
			}
		}
		if ok {
			hits++
		}
	}
	got := float64(hits) / sims
	se := math.Sqrt(want * (1 - want) / sims)
	if math.Abs(got-want) > 3*se {
		t.Errorf("Monte Carlo %.5f, integral %.5f (SE %.5f)", got, want, se)
	}
}
