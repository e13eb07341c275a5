package power

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// TwoGroups is the pooled-variance two-sample t test: group 1 has n units,
// group 2 ⌈Ratio·n⌉ (Ratio 1 for equal groups); Sides is 1 (the alternative
// names the direction) or 2.
type TwoGroups struct {
	Ratio float64
	Sides int
}

// TResult is the t test at one n.
type TResult struct {
	N1, N2, Total int
	DF            float64 // n1 + n2 − 2
	Delta         float64 // noncentrality d·sqrt(n1·n2/(n1+n2))
	TCrit         float64 // critical |t|
	Power         float64
}

// sizes returns the two group sizes at n.
func (g TwoGroups) sizes(n int) []int {
	return []int{n, int(math.Ceil(float64(n)*g.Ratio - 1e-9))}
}

// Validate checks the allocation ratio and the number of sides.
func (g TwoGroups) Validate() error {
	if !(g.Ratio > 0) || math.IsInf(g.Ratio, 0) {
		return fmt.Errorf("allocation ratio %g: must be a positive number", g.Ratio)
	}
	if g.Sides != 1 && g.Sides != 2 {
		return fmt.Errorf("sides %d: must be 1 or 2", g.Sides)
	}
	return nil
}

// Evaluate returns the power at n for standardised difference d
// (difference in means over the common SD) and level alpha. One-sided:
// P(T > t_{1−α}) with T noncentral t(df, δ); two-sided:
// P(F > t²_{1−α/2}) with F noncentral F(1, df, δ²), which counts rejections
// in both tails (Cohen 1988, chapter 2, with exact distributions).
func (g TwoGroups) Evaluate(n int, d, alpha float64) TResult {
	n2 := g.sizes(n)[1]
	r := TResult{N1: n, N2: n2, Total: n + n2, DF: float64(n + n2 - 2)}
	r.Delta = d * math.Sqrt(float64(n)*float64(n2)/float64(n+n2))
	if r.DF < 1 {
		r.TCrit, r.Power = math.NaN(), math.NaN()
		return r
	}
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: r.DF}
	if g.Sides == 1 {
		r.TCrit = st.Quantile(1 - alpha)
		r.Power = prob.NoncentralT{Nu: r.DF, Delta: r.Delta}.Survival(r.TCrit)
	} else {
		r.TCrit = st.Quantile(1 - alpha/2)
		r.Power = prob.NoncentralF{D1: 1, D2: r.DF, Lambda: r.Delta * r.Delta}.Survival(r.TCrit * r.TCrit)
	}
	return r
}

// Solve returns the smallest n (group 1) whose power reaches target.
func (g TwoGroups) Solve(d, alpha, target float64) (TResult, error) {
	var last TResult
	pw := func(n int) float64 {
		last = g.Evaluate(n, d, alpha)
		return last.Power
	}
	if pw(2) >= target {
		return last, nil
	}
	n, err := gallopN(2, tGuess(last.Delta, alpha, g.Sides, target), pw, target)
	if err != nil {
		return last, err
	}
	return g.Evaluate(n, d, alpha), nil
}

// Detectable returns the smallest standardised difference d detected with
// power target at n.
func (g TwoGroups) Detectable(n int, alpha, target float64) (float64, TResult) {
	d := detectable(func(d float64) float64 { return g.Evaluate(n, d, alpha).Power }, target)
	return d, g.Evaluate(n, d, alpha)
}

// searchN returns the smallest n ≥ lo with power(n) ≥ target for a power
// that rises with n: doubling, then bisection.
func searchN(lo int, power func(int) float64, target float64) (int, error) {
	if p := power(lo); p >= target {
		return lo, nil
	}
	hi := lo
	for {
		hi *= 2
		if hi > MaxPerGroup {
			hi = MaxPerGroup
		}
		p := power(hi)
		if p >= target {
			break
		}
		if hi == MaxPerGroup {
			return 0, fmt.Errorf("%w: power at %d per group is only %.4f", ErrTooLarge, hi, p)
		}
		lo = hi
	}
	return bisectN(lo, hi, power, target), nil
}

// tGuess returns the normal-approximation n for a t-based test whose
// noncentrality at n = 2 is delta2: δ grows as sqrt(n), and a z test at
// per-comparison level alpha (split over sides) needs δ = z_{1−α/sides} +
// z_target. The search from it finds the exact n; 0 means no guess.
func tGuess(delta2, alpha float64, sides int, target float64) int {
	if !(delta2 > 0) {
		return 0
	}
	z := math.Sqrt2*math.Erfinv(1-2*alpha/float64(sides)) + math.Sqrt2*math.Erfinv(2*target-1)
	g := 2 * (z / delta2) * (z / delta2)
	if !(g > 2 && g < MaxPerGroup) {
		return 0
	}
	return int(math.Ceil(g))
}

// bisectN returns the smallest n in (lo, hi] with power(n) ≥ target, given
// power(lo) < target ≤ power(hi) and a power that rises with n.
func bisectN(lo, hi int, power func(int) float64, target float64) int {
	for hi-lo > 1 {
		mid := lo + (hi-lo)/2
		if power(mid) >= target {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}
