package power

import (
	"errors"
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"
)

// LatinPlan is a series of S complete t × t Latin squares (rows and columns
// within squares as blocking directions), each treatment once in every row
// and column of every square, with expected treatment means Means and SD
// the residual SD (within rows and columns).
type LatinPlan struct {
	Means []float64
	SD    float64
	Alpha float64
}

// LatinTest is the power of the treatment F test at a number of squares.
type LatinTest struct {
	Squares int     `json:"squares"`
	Units   int     `json:"total_n"`
	DF1     float64 `json:"df1"`
	DF2     float64 `json:"df2"`
	Lambda  float64 `json:"noncentrality"`
	FCrit   float64 `json:"critical_f"`
	Power   float64 `json:"achieved_power"`
}

// Validate checks the plan.
func (p LatinPlan) Validate() error {
	t := len(p.Means)
	switch {
	case t < 3:
		return errors.New("a Latin square needs at least 3 treatments (a 2 × 2 square leaves no error df)")
	case t > 30:
		return fmt.Errorf("%d treatments: at most 30 in a Latin square", t)
	case !(p.SD > 0) || math.IsInf(p.SD, 0):
		return errors.New("the SD must be above 0")
	case !(p.Alpha > 0 && p.Alpha < 1):
		return fmt.Errorf("alpha %g: must be between 0 and 1", p.Alpha)
	}
	return nil
}

// Evaluate returns the exact power of the treatment F test with S squares.
// The additive model (squares, rows and columns within squares, treatments)
// gives N = S t², df (t − 1, (t − 1)(S(t − 1) − 1)) and, each treatment
// being on S·t units, λ = S t Σ(μ_i − μ̄)²/σ² (Cochran and Cox 1957,
// Experimental Designs, section 4.2 for the analysis; the noncentrality
// follows from the expected treatment mean square). The power is the
// noncentral F survival at the central critical value. Checked against
// scipy.stats.ncf (testdata/reference/gen_latin_power.py) and by simulating
// allot's own analysis of the square (power/sim).
func (p LatinPlan) Evaluate(squares int) LatinTest {
	t := float64(len(p.Means))
	var mean, ss float64
	for _, m := range p.Means {
		mean += m / t
	}
	for _, m := range p.Means {
		ss += (m - mean) * (m - mean)
	}
	S := float64(squares)
	r := LatinTest{Squares: squares, Units: squares * len(p.Means) * len(p.Means), DF1: t - 1, DF2: (t - 1) * (S*(t-1) - 1)}
	r.Lambda = S * t * ss / (p.SD * p.SD)
	if r.DF2 < 1 {
		r.FCrit, r.Power = math.NaN(), math.NaN()
		return r
	}
	r.FCrit = fCrit(r.DF1, r.DF2, p.Alpha)
	r.Power = prob.NoncentralF{D1: r.DF1, D2: r.DF2, Lambda: r.Lambda}.Survival(r.FCrit)
	return r
}

// Solve returns the fewest squares (1 or more) whose test reaches target.
func (p LatinPlan) Solve(target float64) (LatinTest, error) {
	if err := p.Validate(); err != nil {
		return LatinTest{}, err
	}
	if !(target > p.Alpha && target < 1) {
		return LatinTest{}, fmt.Errorf("target power %g: must be between alpha and 1", target)
	}
	if p.Evaluate(1).Lambda == 0 {
		return LatinTest{}, errors.New("the treatment means are all equal: there is no effect to detect")
	}
	s, err := searchN(1, func(s int) float64 {
		pw := p.Evaluate(s).Power
		if math.IsNaN(pw) {
			return 0
		}
		return pw
	}, target)
	if err != nil {
		return LatinTest{}, err
	}
	return p.Evaluate(s), nil
}
