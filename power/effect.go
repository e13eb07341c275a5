package power

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// FFromEta2 converts the proportion of variance explained, η², to Cohen's f:
// f = sqrt(η²/(1−η²)) (Cohen 1988, eq. 8.2.19). It returns an error outside
// 0 < η² < 1.
func FFromEta2(eta2 float64) (float64, error) {
	if !(eta2 > 0 && eta2 < 1) {
		return 0, fmt.Errorf("eta² %g: must be between 0 and 1 (exclusive)", eta2)
	}
	return math.Sqrt(eta2 / (1 - eta2)), nil
}

// FFromMeans returns Cohen's f for expected group means with common SD sd and
// allocation weights w (nil for equal groups):
//
//	f = sqrt(Σ w_i (μ_i − μ̄)²) / σ,  μ̄ = Σ w_i μ_i,  Σ w_i = 1
//
// (Cohen 1988, eq. 8.2.1, with the weighted mean for unequal allocation, so
// that λ = f²·N equals Σ n_i (μ_i − μ̄)²/σ²). For unequal groups w must be
// the group sizes actually used (⌈n·rᵢ⌉), not the allocation ratios, which
// differ from them when n·rᵢ is not whole; Design.Noncentrality does this
// at every n.
func FFromMeans(means, w []float64, sd float64) (float64, error) {
	if len(means) < 2 {
		return 0, fmt.Errorf("need at least 2 means, got %d", len(means))
	}
	if !(sd > 0) {
		return 0, fmt.Errorf("SD %g: must be greater than 0", sd)
	}
	wt := normWeights(len(means), w)
	var mbar float64
	for i, m := range means {
		mbar += wt[i] * m
	}
	var ss float64
	for i, m := range means {
		ss += wt[i] * (m - mbar) * (m - mbar)
	}
	if ss == 0 {
		return 0, fmt.Errorf("all means are equal: there is no effect to detect")
	}
	return math.Sqrt(ss) / sd, nil
}

// FFromDiff returns Cohen's f for the least favourable configuration of k
// equal-sized groups whose extreme means differ by diff and whose other
// means sit at the midpoint: f = diff/(sd·sqrt(2k)) (Cohen 1988, eq. 8.2.5,
// pattern 1). Any other configuration with the same range has a larger f, so
// the sample size is enough for all of them.
func FFromDiff(diff, sd float64, k int) (float64, error) {
	if !(diff > 0) {
		return 0, fmt.Errorf("difference %g: must be greater than 0", diff)
	}
	if !(sd > 0) {
		return 0, fmt.Errorf("SD %g: must be greater than 0", sd)
	}
	if k < 2 {
		return 0, fmt.Errorf("%d groups: need at least 2", k)
	}
	return diff / (sd * math.Sqrt(2*float64(k))), nil
}

// PilotSD returns the upper one-sided confidence limit for σ from an SD sd
// estimated on a pilot of m units: sd·sqrt((m−1)/q), q the (1−conf) quantile of
// χ² with m−1 degrees of freedom (Browne 1995, "On the use of a pilot sample
// for sample size determination", Statistics in Medicine 14, 1933–1940).
// Planning with it guards against a pilot that happened to be quiet.
func PilotSD(sd float64, m int, conf float64) (float64, error) {
	if !(sd > 0) {
		return 0, fmt.Errorf("SD %g: must be greater than 0", sd)
	}
	if m < 2 {
		return 0, fmt.Errorf("pilot of %d units: need at least 2", m)
	}
	if !(conf > 0 && conf < 1) {
		return 0, fmt.Errorf("confidence %g: must be between 0 and 1", conf)
	}
	q := distuv.ChiSquared{K: float64(m - 1)}.Quantile(1 - conf)
	return sd * math.Sqrt(float64(m-1)/q), nil
}

// normWeights returns k weights summing to 1: w scaled, or equal weights for
// nil w.
func normWeights(k int, w []float64) []float64 {
	out := make([]float64, k)
	if w == nil {
		for i := range out {
			out[i] = 1 / float64(k)
		}
		return out
	}
	var s float64
	for _, v := range w {
		s += v
	}
	for i := range out {
		out[i] = w[i] / s
	}
	return out
}
