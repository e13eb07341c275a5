package prob

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// Source: testdata/reference/large_lambda.tsv, scipy.stats ncf and nct
// (Boost) at noncentralities 10^3..10^8, made by
// testdata/reference/gen_large_lambda.py. Absolute tolerance 1e-9 (the
// precision a power needs; scipy's own values agree with their quantile
// levels to about 1e-11 there).
func TestLargeNoncentrality(t *testing.T) {
	if testing.Short() {
		t.Skip("large-λ sums take a few seconds")
	}
	f, err := os.Open("../testdata/reference/large_lambda.tsv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	n := 0
	for sc.Scan() {
		l := sc.Text()
		if strings.HasPrefix(l, "#") || l == "" {
			continue
		}
		c := strings.Split(l, "\t")
		v := make([]float64, 6)
		for i := 2; i < 6; i++ {
			v[i], _ = strconv.ParseFloat(c[i], 64)
		}
		var got float64
		if c[0] == "ncf" {
			d1, _ := strconv.ParseFloat(c[1], 64)
			got = NoncentralF{D1: d1, D2: v[2], Lambda: v[3]}.Survival(v[4])
		} else {
			got = NoncentralT{Nu: v[2], Delta: v[3]}.Survival(v[4])
		}
		if math.Abs(got-v[5]) > 1e-9 {
			t.Errorf("%s: got %.12g, scipy %.12g", l, got, v[5])
		}
		n++
	}
	t.Logf("%d large-noncentrality values checked", n)
}

// Power rises with the noncentrality, also across the saturation shortcut
// (μ = 10^4, λ = 2·10^4) and up to λ = 10^12.
func TestMonotoneInNoncentrality(t *testing.T) {
	for _, d := range []struct{ d1, d2, x float64 }{{1, 10, 4.96}, {3, 60, 2.76}, {1, 1000, 20500}, {2, 50, 1e4}} {
		prev := -1.0
		for lam := 1.0; lam <= 1e12; lam *= 1.21 {
			p := NoncentralF{D1: d.d1, D2: d.d2, Lambda: lam}.Survival(d.x)
			if p < prev-1e-12 || math.IsNaN(p) {
				t.Fatalf("df %g, %g at x %g: power %.15g at λ %g below %.15g before", d.d1, d.d2, d.x, p, lam, prev)
			}
			prev = p
		}
		if prev != 1 {
			t.Errorf("df %g, %g: power %g at λ 10^12, want 1", d.d1, d.d2, prev)
		}
	}
	prev := -1.0
	for delta := 0.5; delta <= 1e6; delta *= 1.1 {
		p := NoncentralT{Nu: 20, Delta: delta}.Survival(150)
		if p < prev-1e-12 || math.IsNaN(p) {
			t.Fatalf("nct: power %.15g at δ %g below %.15g before", p, delta, prev)
		}
		prev = p
	}
}

func BenchmarkNoncentralFLarge(b *testing.B) {
	for _, c := range []struct {
		name string
		d    NoncentralF
		x    float64
	}{
		{"lambda=1e8/body", NoncentralF{D1: 1, D2: 1000, Lambda: 1e8}, 1e8},
		{"lambda=1e12/saturated", NoncentralF{D1: 2, D2: 30, Lambda: 1e12}, 3.3},
	} {
		b.Run(c.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				c.d.Survival(c.x)
			}
		})
	}
}
