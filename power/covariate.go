package power

import (
	"fmt"
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
	d.Covariate, d.CovariateR = true, rho
	return d.Evaluate(n, f, alpha)
}

// SolveCovariate returns the smallest n reaching target power with the
// covariate adjustment of EvaluateCovariate.
func (d Design) SolveCovariate(f, alpha, target, rho float64) (Result, error) {
	if !(rho > -1 && rho < 1) {
		return Result{}, fmt.Errorf("--covariate-r %g: the correlation must be strictly between −1 and 1", rho)
	}
	d.Covariate, d.CovariateR = true, rho
	return d.Solve(f, alpha, target)
}
