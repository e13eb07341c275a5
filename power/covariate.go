package power

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// EvaluateCovariate returns the F test at n for effect f when the analysis
// adjusts for a baseline covariate whose correlation with the outcome
// (within treatments) is rho: the error variance shrinks to σ²(1 − ρ²), so
// λ = f²N/(1 − ρ²), and the covariate's slope costs one error df
// (Borm, Fransen and Lemmens 2007, "A simple sample size formula for
// analysis of covariance in randomized clinical trials", J. Clin.
// Epidemiol. 60, 1234–1238, who give the (1 − ρ²) factor; the exact
// noncentral F is used here instead of their normal approximation). f is
// Cohen's f with the SD without the covariate. Checked against
// scipy.stats.ncf with the reduced variance (gen_covariate_power.py) and by
// simulation of the analysis of covariance.
func (d Design) EvaluateCovariate(n int, f, alpha, rho float64) Result {
	r := d.Evaluate(n, f, alpha)
	r.DF2--
	r.Lambda = f * f * float64(r.Total) / (1 - rho*rho)
	if r.DF2 < 1 {
		r.FCrit, r.Power = math.NaN(), math.NaN()
		return r
	}
	r.FCrit = distuv.F{D1: r.DF1, D2: r.DF2}.Quantile(1 - alpha)
	r.Power = prob.NoncentralF{D1: r.DF1, D2: r.DF2, Lambda: r.Lambda}.Survival(r.FCrit)
	return r
}

// SolveCovariate returns the smallest n reaching target power with the
// covariate adjustment of EvaluateCovariate.
func (d Design) SolveCovariate(f, alpha, target, rho float64) (Result, error) {
	if !(rho > -1 && rho < 1) {
		return Result{}, fmt.Errorf("--covariate-r %g: the correlation must be strictly between −1 and 1", rho)
	}
	var last Result
	n, err := searchN(d.MinN(), func(n int) float64 {
		last = d.EvaluateCovariate(n, f, alpha, rho)
		if math.IsNaN(last.Power) {
			return 0
		}
		return last.Power
	}, target)
	if err != nil {
		return last, err
	}
	return d.EvaluateCovariate(n, f, alpha, rho), nil
}
