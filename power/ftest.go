package power

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// MaxPerGroup caps the sample-size search: a design that needs more than this
// many units per group (or blocks) is reported as not feasible rather than
// searched for ever.
const MaxPerGroup = 1_000_000

// ErrTooLarge reports that no n up to MaxPerGroup reaches the target power.
var ErrTooLarge = errors.New("power: the target power is not reached within the search limit")

// Factor is a treatment factor with its number of levels and, optionally,
// their names.
type Factor struct {
	Name   string   `json:"name"`
	Levels int      `json:"levels"`
	Names  []string `json:"level_names,omitempty"`
}

// Design is the balanced layout whose F test is planned: the full factorial
// of Factors (one factor for a one-way layout), either completely randomised
// (n units in each treatment cell) or in randomised complete blocks (n
// blocks, each holding every treatment cell once).
type Design struct {
	Factors []Factor
	// Term lists the factors of the tested effect: one name for a main effect,
	// several for their interaction. Empty means the single factor of a
	// one-way layout.
	Term []string
	// Blocked selects randomised complete blocks; n then counts blocks.
	Blocked bool
	// Ratios gives unequal allocation for a one-way completely randomised
	// layout: group i gets ⌈n·Ratios[i]⌉ units. Nil means equal groups.
	Ratios []float64
	// Covariate says the analysis adjusts for a baseline covariate whose
	// correlation (within treatments) with the outcome is CovariateR: the
	// error variance shrinks by 1 − ρ² and the slope costs one error df
	// (see EvaluateCovariate).
	Covariate  bool
	CovariateR float64
}

// Validate checks the design and returns an error naming what is wrong.
func (d Design) Validate() error {
	if !(d.CovariateR > -1 && d.CovariateR < 1) {
		return fmt.Errorf("covariate correlation %g: must be strictly between -1 and 1", d.CovariateR)
	}
	if len(d.Factors) == 0 {
		return errors.New("no factors: give the number of groups or at least one factor")
	}
	if len(d.Factors) > 4 {
		return fmt.Errorf("%d factors: at most 4 are supported", len(d.Factors))
	}
	seen := map[string]bool{}
	for _, f := range d.Factors {
		if f.Levels < 2 {
			return fmt.Errorf("factor %q has %d level(s): a factor needs at least 2", f.Name, f.Levels)
		}
		if seen[f.Name] {
			return fmt.Errorf("factor %q is given twice", f.Name)
		}
		seen[f.Name] = true
	}
	if len(d.Term) == 0 && len(d.Factors) > 1 {
		return errors.New("a factorial needs the term to test: a factor name, or names joined for an interaction")
	}
	for _, t := range d.Term {
		if !seen[t] {
			return fmt.Errorf("term names unknown factor %q (factors: %s)", t, strings.Join(d.factorNames(), ", "))
		}
	}
	if d.Ratios != nil {
		if len(d.Factors) != 1 || d.Blocked {
			return errors.New("unequal allocation is supported for a one-way completely randomised layout only")
		}
		if len(d.Ratios) != d.Factors[0].Levels {
			return fmt.Errorf("%d allocation ratios for %d groups: give one per group", len(d.Ratios), d.Factors[0].Levels)
		}
		for _, r := range d.Ratios {
			if !(r > 0) || math.IsInf(r, 0) {
				return fmt.Errorf("allocation ratio %g: must be a positive number", r)
			}
		}
	}
	return nil
}

func (d Design) factorNames() []string {
	var s []string
	for _, f := range d.Factors {
		s = append(s, f.Name)
	}
	return s
}

// Cells returns the number of treatment cells (groups).
func (d Design) Cells() int {
	c := 1
	for _, f := range d.Factors {
		c *= f.Levels
	}
	return c
}

// TermDF returns the numerator degrees of freedom of the tested term,
// ∏ (levels − 1) over its factors.
func (d Design) TermDF() int {
	if len(d.Term) == 0 {
		return d.Factors[0].Levels - 1
	}
	df := 1
	for _, f := range d.Factors {
		for _, t := range d.Term {
			if t == f.Name {
				df *= f.Levels - 1
			}
		}
	}
	return df
}

// TermName returns the tested term, for example "dose" or "dose × diet".
func (d Design) TermName() string {
	if len(d.Term) == 0 {
		return d.Factors[0].Name
	}
	return strings.Join(d.Term, " × ")
}

// MinN is the smallest n with a positive error df: 2 units per group, or 2
// blocks.
func (d Design) MinN() int { return 2 }

// GroupSizes returns the number of units in each treatment cell at n.
func (d Design) GroupSizes(n int) []int {
	sizes := make([]int, d.Cells())
	for i := range sizes {
		sizes[i] = n
		if d.Ratios != nil {
			sizes[i] = int(math.Ceil(float64(n)*d.Ratios[i] - 1e-9))
		}
	}
	return sizes
}

// Result is the F test of a design at one n.
type Result struct {
	N          int     // units per group, or blocks when Blocked
	GroupSizes []int   // units per treatment cell
	Total      int     // total units
	DF1, DF2   float64 // numerator and error degrees of freedom
	Lambda     float64 // noncentrality f²·Total
	FCrit      float64 // critical F at alpha
	Power      float64 // P(reject) at effect f
}

// Evaluate returns the F test at n for Cohen's f and level alpha; it is
// EvaluateEffect with Effect{F: f}.
func (d Design) Evaluate(n int, f, alpha float64) Result {
	return d.EvaluateEffect(n, Effect{F: f}, alpha)
}

// EvaluateEffect returns the F test at n for effect e and level alpha:
// df1 = TermDF, df2 = N − cells (completely randomised) or
// (cells − 1)(n − 1) (complete blocks), λ = d.Noncentrality(e, sizes at n),
// power = P(F(df1, df2, λ) > F_{1−alpha}(df1, df2)). An infinite λ (an
// effect so large that f²·N overflows) has power 1.
func (d Design) EvaluateEffect(n int, e Effect, alpha float64) Result {
	sizes := d.GroupSizes(n)
	total := 0
	for _, s := range sizes {
		total += s
	}
	cells := d.Cells()
	r := Result{N: n, GroupSizes: sizes, Total: total, DF1: float64(d.TermDF())}
	if d.Blocked {
		r.DF2 = float64((cells - 1) * (n - 1))
	} else {
		r.DF2 = float64(total - cells)
	}
	r.Lambda = d.Noncentrality(e, sizes)
	if d.Covariate {
		r.DF2--
		r.Lambda /= 1 - d.CovariateR*d.CovariateR
	}
	if r.DF2 < 1 {
		r.FCrit, r.Power = math.NaN(), math.NaN()
		return r
	}
	r.FCrit = fCrit(r.DF1, r.DF2, alpha)
	if math.IsInf(r.Lambda, 1) {
		r.Power = 1
		return r
	}
	r.Power = prob.NoncentralF{D1: r.DF1, D2: r.DF2, Lambda: r.Lambda}.Survival(r.FCrit)
	return r
}

func fCrit(df1, df2, alpha float64) float64 {
	return distuv.F{D1: df1, D2: df2}.Quantile(1 - alpha)
}

// Solve returns the smallest n ≥ MinN whose power at Cohen's f reaches
// target; it is SolveEffect with Effect{F: f}.
func (d Design) Solve(f, alpha, target float64) (Result, error) {
	return d.SolveEffect(Effect{F: f}, alpha, target)
}

// SolveEffect returns the smallest n ≥ MinN whose power at effect e reaches
// target. The power rises with n, so the search doubles n until the target
// is passed and then bisects; it costs about 2·log2(n) evaluations. It
// returns ErrTooLarge (wrapped, with the power reached) when n would exceed
// MaxPerGroup.
//
// The search starts from a guess: λ grows about in proportion to n, so
// the λ that a χ² test (infinite error df) would need, from the normal
// approximation of the noncentral χ² (mean ν+λ, variance 2(ν+2λ)) at
// the Wilson–Hilferty χ² quantile (Johnson, Kotz and Balakrishnan 1994,
// Continuous Univariate Distributions vol. 1, 2nd ed., eq. 18.24; from
// memory), scaled from λ at n = MinN, gives n to within a few units. The
// search then gallops from the guess to bracket the answer and bisects;
// the guess only saves evaluations, the answer is the exact smallest n.
func (d Design) SolveEffect(e Effect, alpha, target float64) (Result, error) {
	var last Result
	pw := func(n int) float64 {
		last = d.EvaluateEffect(n, e, alpha)
		return last.Power
	}
	lo := d.MinN()
	if pw(lo) >= target {
		return last, nil
	}
	guess := 0
	if lam0 := last.Lambda; lam0 > 0 {
		need := chiSquareLambda(last.DF1, alpha, target)
		if g := float64(lo) * need / lam0; g > float64(lo) && g < MaxPerGroup {
			guess = int(math.Ceil(g))
		}
	}
	n, err := gallopN(lo, guess, pw, target)
	if err != nil {
		return last, err
	}
	return d.EvaluateEffect(n, e, alpha), nil
}

// Detectable returns the smallest Cohen's f that the design detects with power
// target at n, found by bisection on f (power rises with f) to a relative
// precision of 1e-10.
func (d Design) Detectable(n int, alpha, target float64) (float64, Result) {
	f := detectable(func(f float64) float64 { return d.Evaluate(n, f, alpha).Power }, target)
	return f, d.Evaluate(n, f, alpha)
}

// detectable solves power(e) = target for the effect e by bracketing and
// bisection.
func detectable(power func(float64) float64, target float64) float64 {
	lo, hi := 0.0, 0.1
	for power(hi) < target {
		lo, hi = hi, hi*2
		if hi > 1e6 {
			return math.Inf(1)
		}
	}
	for i := 0; i < 200 && hi-lo > 1e-10*hi; i++ {
		mid := (lo + hi) / 2
		if power(mid) >= target {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}

// chiSquareLambda returns the noncentrality at which a χ² test with nu df
// at level alpha has the target power, by the normal approximation of the
// noncentral χ² at the Wilson–Hilferty quantile: λ solves
// ν + λ − c = z·sqrt(2(ν + 2λ)), z the standard normal quantile of target.
func chiSquareLambda(nu, alpha, target float64) float64 {
	za := math.Sqrt2 * math.Erfinv(1-2*alpha)
	zp := math.Sqrt2 * math.Erfinv(2*target-1)
	h := 2 / (9 * nu)
	c := nu * math.Pow(1-h+za*math.Sqrt(h), 3)
	// (ν + λ − c)² = 2 zp² (ν + 2λ), for the root with ν + λ > c.
	u := c - nu // λ − u = zp·sqrt(2(ν+2λ))
	b := -(2*u + 4*zp*zp)
	cc := u*u - 2*zp*zp*nu
	disc := b*b - 4*cc
	if disc < 0 {
		return u
	}
	return (-b + math.Sqrt(disc)) / 2
}

// gallopN returns the smallest n > lo with power(n) ≥ target (power(lo) is
// known to fall short), for a power that rises with n: from guess it
// steps by 1, 2, 4, ... until the answer is bracketed, then bisects.
// Without a guess it doubles from lo.
func gallopN(lo int, guess int, power func(int) float64, target float64) (int, error) {
	if guess <= lo {
		return searchN(lo, power, target)
	}
	hi := 0
	if power(guess) >= target {
		hi = guess
		for step := 1; ; step *= 2 {
			n := hi - step
			if n <= lo {
				break
			}
			if power(n) < target {
				lo = n
				break
			}
			hi = n
		}
	} else {
		lo = guess
		for step := 1; ; step *= 2 {
			n := lo + step
			if n >= MaxPerGroup {
				n = MaxPerGroup
			}
			p := power(n)
			if p >= target {
				hi = n
				break
			}
			if n == MaxPerGroup {
				return 0, fmt.Errorf("%w: power at %d per group is only %.4f", ErrTooLarge, n, p)
			}
			lo = n
		}
	}
	return bisectN(lo, hi, power, target), nil
}
