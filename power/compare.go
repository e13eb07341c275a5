package power

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// Comparisons plans pairwise t comparisons after a one-way layout, each at
// the Bonferroni-adjusted level alpha/m: every treatment against a control
// (m = k−1) or all pairs (m = k(k−1)/2). Each comparison uses the pooled
// error of the whole design (df of the design's error), so
//
//	δ = (D/σ) / sqrt(1/n_a + 1/n_b),  power = P(reject | δ)
//
// with the noncentral t distribution, two-sided unless Sides is 1. With
// unequal allocation the reported power is the smallest over the planned
// comparisons (the pair with the fewest units).
type Comparisons struct {
	Design  Design
	AllPair bool // all pairs instead of each against the control
	Control int  // index of the control group
	Sides   int
	// Dunnett uses Dunnett's critical value for the many-to-one family
	// (prob.Dunnett, exact for the planned group sizes) instead of
	// Bonferroni's t_{1−α/m}; it is less conservative.
	Dunnett bool
	// Tukey (with AllPair) uses Tukey's critical value for all pairs,
	// |t| > q_{1−α}(k, df)/√2 with q the studentized range quantile
	// (prob.StudentizedRange), the test allot analyze runs by default; with
	// unequal groups the same critical value applies to each pair's own
	// standard error (Tukey–Kramer; Kramer 1956, "Extension of multiple range
	// tests to group means with unequal numbers of replications", Biometrics
	// 12, 307–310). Power is computed for one pair: the probability that the
	// pair's noncentral t, δ = (D/σ)/sqrt(1/nₐ + 1/n_b), exceeds q/√2 in
	// absolute value. This is the usual per-pair planning of Tukey's method
	// (Hsu 1996, Multiple Comparisons: Theory and Methods, Chapman & Hall,
	// chapter 5, which plans the same critical value through the width of
	// the simultaneous intervals; from memory).
	Tukey bool
}

// CResult is the comparison plan at one n.
type CResult struct {
	N          int
	GroupSizes []int
	Total      int
	M          int     // number of comparisons
	AlphaEach  float64 // alpha/m
	DF         float64
	Delta      float64 // of the weakest comparison
	TCrit      float64
	Power      float64 // of the weakest comparison
}

// Count returns the number of planned comparisons.
func (c Comparisons) Count() int {
	k := c.Design.Cells()
	if c.AllPair {
		return k * (k - 1) / 2
	}
	return k - 1
}

// Evaluate returns the weakest comparison's power at n for standardised
// difference d = D/σ.
func (c Comparisons) Evaluate(n int, d, alpha float64) CResult {
	sizes := c.Design.GroupSizes(n)
	r := CResult{N: n, GroupSizes: sizes, M: c.Count()}
	for _, s := range sizes {
		r.Total += s
	}
	r.AlphaEach = alpha / float64(r.M)
	if c.Design.Blocked {
		r.DF = float64((len(sizes) - 1) * (n - 1))
	} else {
		r.DF = float64(r.Total - len(sizes))
	}
	if r.DF < 1 {
		r.TCrit, r.Power = math.NaN(), math.NaN()
		return r
	}
	// The weakest comparison has the largest 1/n_a + 1/n_b.
	worst := 0.0
	for a := range sizes {
		for b := a + 1; b < len(sizes); b++ {
			if !c.AllPair && a != c.Control && b != c.Control {
				continue
			}
			worst = math.Max(worst, 1/float64(sizes[a])+1/float64(sizes[b]))
		}
	}
	r.Delta = d / math.Sqrt(worst)
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: r.DF}
	if c.Dunnett && !c.AllPair {
		var lam []float64
		for i, s := range sizes {
			if i != c.Control {
				lam = append(lam, math.Sqrt(float64(s)/float64(s+sizes[c.Control])))
			}
		}
		r.TCrit = prob.Dunnett{Lambda: lam, Nu: r.DF, Sides: c.Sides}.Quantile(1 - alpha)
		r.AlphaEach = math.NaN()
		nt := prob.NoncentralT{Nu: r.DF, Delta: r.Delta}
		r.Power = nt.Survival(r.TCrit)
		if c.Sides == 2 {
			r.Power += nt.CDF(-r.TCrit)
		}
		return r
	}
	if c.Tukey && c.AllPair {
		r.AlphaEach = math.NaN()
		r.TCrit = prob.StudentizedRange{K: float64(len(sizes)), Nu: r.DF}.Quantile(1-alpha) / math.Sqrt2
		nt := prob.NoncentralT{Nu: r.DF, Delta: r.Delta}
		r.Power = nt.Survival(r.TCrit) + nt.CDF(-r.TCrit)
		return r
	}
	if c.Sides == 1 {
		r.TCrit = st.Quantile(1 - r.AlphaEach)
		r.Power = prob.NoncentralT{Nu: r.DF, Delta: r.Delta}.Survival(r.TCrit)
	} else {
		r.TCrit = st.Quantile(1 - r.AlphaEach/2)
		r.Power = prob.NoncentralF{D1: 1, D2: r.DF, Lambda: r.Delta * r.Delta}.Survival(r.TCrit * r.TCrit)
	}
	return r
}

// Solve returns the smallest n whose weakest comparison reaches target.
func (c Comparisons) Solve(d, alpha, target float64) (CResult, error) {
	var last CResult
	n, err := searchN(c.Design.MinN(), func(n int) float64 {
		last = c.Evaluate(n, d, alpha)
		return last.Power
	}, target)
	if err != nil {
		return last, err
	}
	return c.Evaluate(n, d, alpha), nil
}

// Detectable returns the smallest standardised difference detected by the
// weakest comparison with power target at n.
func (c Comparisons) Detectable(n int, alpha, target float64) (float64, CResult) {
	d := detectable(func(d float64) float64 { return c.Evaluate(n, d, alpha).Power }, target)
	return d, c.Evaluate(n, d, alpha)
}

func (c Comparisons) validate() error {
	if len(c.Design.Factors) != 1 {
		return fmt.Errorf("planned comparisons are supported for one-factor layouts")
	}
	if c.Control < 0 || c.Control >= c.Design.Cells() {
		return fmt.Errorf("control group %d out of range", c.Control+1)
	}
	if c.Tukey && (!c.AllPair || c.Sides != 2) {
		return fmt.Errorf("the Tukey comparisons are of all pairs, two-sided")
	}
	return nil
}
