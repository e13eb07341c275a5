package prob

import "math"

// mixtureEps is the relative size at which the neglected tails of a mixture
// sum stop the summation. The bounds used are rigorous (geometric majorants
// of the weights), so the truncation error is below mixtureEps times the sum.
const mixtureEps = 1e-16

// mixtureMaxTerms caps the number of terms in each direction, raised to
// 20·sqrt(μ) for larger μ so that the walk always covers the Poisson bulk
// (the geometric bound ends it after about 9·sqrt(μ) terms); the cap only
// guards against non-finite input.
const mixtureMaxTerms = 200000

// Saturation shortcut. For μ above saturationMu the sum first checks the
// incomplete beta factor at the two ends of the weights' bulk,
// j = μ ± saturationSD·sqrt(μ). B_j is monotone in j, so when the two ends
// agree to saturationTol every B_j in between does too, and the weights
// outside the bulk weigh less than e^{−saturationSD²/2·(1−o(1))} of the
// total (Chernoff–Bernstein bounds on the Poisson tails: P(J ≤ μ − t) ≤
// e^{−t²/(2μ)}, P(J ≥ μ + t) ≤ e^{−t²/(2(μ + t/3))}); the sum is then the
// total weight times B at the mode, to an absolute error below 1e-16 of
// the total weight. This is what a normal approximation of the mixture
// gives in that case, with a rigorous bound instead of an assumed one. It
// answers, for example, the power of an F test at λ = 10^12 in two
// incomplete beta evaluations instead of 10^7 terms.
// linearFloor is the starting D below which the recurrence for D is
// carried in logarithms.
const linearFloor = 1e-280

const (
	saturationMu  = 1e4
	saturationSD  = 12.0
	saturationTol = 1e-17
)

// betaMixture returns
//
//	S = Σ_{j≥0} w_j · B_j,   w_j = exp(logK − μ) · μ^j / Γ(j + c),
//
// where x + xc = 1 (xc is passed separately so that it keeps its digits
// when x is close to 1), B_j = I_x(a+j, b) (upper == false) or B_j = 1 − I_x(a+j, b)
// (upper == true) and I_x is the regularised incomplete beta function
// (regIncBeta).
//
// With c = 1 and logK = 0 the weights are Poisson(μ) probabilities, which
// gives the noncentral F and beta distributions (Johnson, Kotz and
// Balakrishnan 1995, Continuous Univariate Distributions vol. 2, 2nd ed.,
// chapter 30, eq. 30.7). With c = 3/2 it gives the odd-index series of the
// noncentral t distribution (Lenth 1989, Applied Statistics 38(1) 185–189,
// eq. 2).
//
// The sum starts at the mode of the weights, j0 = max(0, ⌊μ − c + 1⌋), where
// B_j0 is evaluated directly with regIncBeta, and walks
// outward in both directions. Neighbouring B_j follow from the recurrence
//
//	I_x(a'+1, b) = I_x(a', b) − D(a'),
//	D(a') = Γ(a'+b) / (Γ(a'+1) Γ(b)) · x^a' (1−x)^b
//
// (Abramowitz and Stegun 1964, 26.5.16), carried in logarithms so that no
// term underflows on the way. In the direction where B_j grows the recurrence
// only adds positive terms; where it shrinks it subtracts, which costs at most
// a few units in the last place relative to B_j0 and therefore to S.
//
// Each walk stops when the weights beyond the current term, bounded by the
// geometric series w_j·r/(1−r) with r the (decreasing) ratio of successive
// weights, times the largest B still possible in that direction, fall below
// mixtureEps·S. Rejected alternative: summing from j = 0 upward (as in the
// original AS 226 algorithm) wastes about μ terms and underflows e^{−μ} for
// μ > 745.
func betaMixture(mu, c, logK, a, b, x, xc float64, upper bool) float64 {
	switch {
	case x <= 0 || xc >= 1:
		if upper {
			return math.Exp(logK + lgammaRatioSumScaled(mu, c))
		}
		return 0
	case x >= 1 || xc <= 0:
		if upper {
			return 0
		}
		return math.Exp(logK + lgammaRatioSumScaled(mu, c))
	}
	lx, l1x := math.Log(x), math.Log(xc)
	// log D(a') = a' log x + b log(1−x) − log a' − log B(a', b).
	logD := func(ap float64) float64 {
		return ap*lx + b*l1x - math.Log(ap) - logBeta(ap, b)
	}
	incBeta := func(ap float64) float64 {
		if upper {
			return regIncBeta(b, ap, xc, x)
		}
		return regIncBeta(ap, b, x, xc)
	}

	if mu == 0 {
		g, _ := math.Lgamma(c)
		return math.Exp(logK-g) * incBeta(a)
	}
	lmu := math.Log(mu)
	j0 := math.Floor(mu - c + 1)
	if j0 < 0 {
		j0 = 0
	}
	if mu > saturationMu {
		half := saturationSD * math.Sqrt(mu)
		blo, bhi := incBeta(a+math.Max(0, math.Floor(j0-half))), incBeta(a+math.Ceil(j0+half))
		if math.Abs(bhi-blo) <= saturationTol {
			return math.Exp(logK+lgammaRatioSumScaled(mu, c)) * incBeta(a+j0)
		}
	}
	maxTerms := math.Max(mixtureMaxTerms, 20*math.Sqrt(mu))
	// log w_j0 = logK − μ + j0 log μ − log Γ(j0 + c) in a form where no
	// large terms cancel (at μ = 5·10^7 the direct form loses eight digits).
	logw0 := logK + (1-c)*lmu + logPoisson(j0+c-1, mu)
	b0 := incBeta(a + j0)
	sum := math.Exp(logw0) * b0

	// The recurrences run on the values themselves (one multiplication
	// each) rather than their logarithms (an exp and a log each), which
	// makes a sum three times faster; D is carried in logarithms instead
	// when it starts below linearFloor, where the linear form could
	// underflow before D grows back to matter.
	ld0 := logD(a + j0)
	w0, d0 := math.Exp(logw0), math.Exp(ld0)
	useLog := d0 < linearFloor

	// Upward: j = j0+1, j0+2, ...
	w, bj, ld, d := w0, b0, ld0, d0
	for j := j0 + 1; j < j0+maxTerms; j++ {
		// B_j from B_{j-1} with D(a+j-1).
		if upper {
			bj += d
			if bj > 1 {
				bj = 1
			}
		} else {
			bj -= d
			if bj < 0 {
				bj = 0
			}
		}
		ap := a + j - 1
		if useLog {
			ld += lx + math.Log((ap+b)/(ap+1))
			d = math.Exp(ld)
		} else {
			d *= x * (ap + b) / (ap + 1)
		}
		w *= mu / (j - 1 + c)
		sum += w * bj
		r := mu / (j + c)
		if r < 1 {
			bmax := 1.0
			if !upper {
				bmax = bj
			}
			if w*r/(1-r)*bmax <= mixtureEps*sum || w == 0 && bmax == 0 {
				break
			}
		}
	}

	// Downward: j = j0-1, ..., 0.
	w, bj, ld, d = w0, b0, ld0, d0
	for j := j0 - 1; j >= 0; j-- {
		// D(a+j) from D(a+j+1): divide by x(a+j+b)/(a+j+1).
		ap := a + j
		if useLog {
			ld -= lx + math.Log((ap+b)/(ap+1))
			d = math.Exp(ld)
		} else {
			d /= x * (ap + b) / (ap + 1)
		}
		if upper {
			bj -= d
			if bj < 0 {
				bj = 0
			}
		} else {
			bj += d
			if bj > 1 {
				bj = 1
			}
		}
		w *= (j + c) / mu
		sum += w * bj
		r := (j - 1 + c) / mu
		if j == 0 {
			break
		}
		if r < 1 {
			bmax := 1.0
			if upper {
				bmax = bj
			}
			if w*r/(1-r)*bmax <= mixtureEps*sum {
				break
			}
		}
	}
	return sum
}

// lgammaRatioSumScaled returns log(e^{−μ} Σ_j μ^j/Γ(j+c)) for the two
// weight families used here: c = 1 (0) and c = 3/2, for which the sum is
// e^μ · erf(√μ) / √μ (Abramowitz and Stegun 1964, 7.1.6).
func lgammaRatioSumScaled(mu, c float64) float64 {
	switch c {
	case 1:
		return 0
	case 1.5:
		if mu == 0 {
			g, _ := math.Lgamma(1.5)
			return -g
		}
		return math.Log(math.Erf(math.Sqrt(mu)) / math.Sqrt(mu))
	}
	panic("prob: lgammaRatioSumScaled: unsupported c")
}

// logPoisson returns log(e^{−μ} μ^x / Γ(x+1)) for real x ≥ 0 and μ > 0 in
// Loader's saddle-point form, −½ log(2πx) − stirlerr(x) − bd0(x, μ),
// which keeps full relative accuracy for large x and μ where the direct
// form x log μ − μ − log Γ(x+1) cancels (Loader 2000, "Fast and accurate
// computation of binomial probabilities", technical note; from memory).
func logPoisson(x, mu float64) float64 {
	if x == 0 {
		return -mu
	}
	if x < stirlingThreshold {
		g, _ := math.Lgamma(x + 1)
		return x*math.Log(mu) - mu - g
	}
	// stirlerr(x) = log Γ(x+1) − (x+½) log x + x − ½ log 2π = c(x+1) ...
	// expressed through the Stirling remainder of Γ(x): log Γ(x+1) =
	// log x + log Γ(x), so stirlerr(x) = lgammaCorr(x).
	return -0.5*math.Log(2*math.Pi*x) - lgammaCorr(x) - bd0(x, mu)
}

// bd0 returns x log(x/μ) + μ − x without cancellation: by its series in
// v = (x−μ)/(x+μ) when x is near μ (Loader 2000).
func bd0(x, mu float64) float64 {
	if math.Abs(x-mu) < 0.1*(x+mu) {
		v := (x - mu) / (x + mu)
		s := (x - mu) * v
		ej := 2 * x * v
		v *= v
		for j := 1; j < 1000; j++ {
			ej *= v
			s1 := s + ej/float64(2*j+1)
			if s1 == s {
				return s1
			}
			s = s1
		}
		return s
	}
	return x*math.Log(x/mu) + mu - x
}
