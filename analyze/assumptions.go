package analyze

import (
	"math"
	"slices"
	"sort"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// ShapiroWilk returns the Shapiro–Wilk W statistic of x and its p-value by
// Royston's approximation (Royston 1995, "Remark AS R94: A remark on
// algorithm AS 181: the W-test for normality", Applied Statistics 44(4)
// 547–551): coefficients from normal scores with polynomial corrections for
// the two extreme ones, and a normalising transformation of W whose mean and
// SD are polynomials in n (n ≤ 11) or log n (n > 11).
//
// Domain: 3 ≤ n ≤ 5000 and x not constant; otherwise ok is false. Accuracy:
// this is computed in double precision; scipy.stats.shapiro runs the same
// algorithm in single precision, and the two agree to 5e-6 in W and 1e-3
// in p (the p-value amplifies W's last digits as W nears 1) on
// testdata/reference/assumptions.json.
func ShapiroWilk(x []float64) (w, p float64, ok bool) {
	n := len(x)
	if n < 3 || n > 5000 {
		return math.NaN(), math.NaN(), false
	}
	y := append([]float64(nil), x...)
	sort.Float64s(y)
	for _, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.NaN(), math.NaN(), false
		}
	}
	if y[n-1]-y[0] < 1e-19*math.Abs(y[0]) || y[n-1] == y[0] {
		return math.NaN(), math.NaN(), false
	}
	// W is unchanged by y ↦ (y − y_(1))/(y_(n) − y_(1)); the scaled values
	// lie in [0, 1], so their squares neither underflow (data near 1e-300)
	// nor overflow (near 1e154).
	lo, rng := y[0], y[n-1]-y[0]
	if math.IsInf(rng, 0) {
		lo, rng = 0, math.Max(math.Abs(y[0]), math.Abs(y[n-1]))
	}
	for i := range y {
		y[i] = (y[i] - lo) / rng
	}
	nn2 := n / 2
	a := make([]float64, nn2+1) // 1-based as in AS R94
	an := float64(n)
	poly := func(c []float64, x float64) float64 {
		r := 0.0
		for i := len(c) - 1; i >= 0; i-- {
			r = r*x + c[i]
		}
		return r
	}
	if n == 3 {
		a[1] = math.Sqrt(0.5)
	} else {
		c1 := []float64{0, 0.221157, -0.147981, -2.07119, 4.434685, -2.706056}
		c2 := []float64{0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633}
		an25 := an + 0.25
		m := make([]float64, nn2+1)
		var summ2 float64
		std := distuv.UnitNormal
		for i := 1; i <= nn2; i++ {
			m[i] = std.Quantile((float64(i) - 0.375) / an25)
			summ2 += m[i] * m[i]
		}
		summ2 *= 2
		ssumm2 := math.Sqrt(summ2)
		rsn := 1 / math.Sqrt(an)
		a1 := poly(c1, rsn) - m[1]/ssumm2
		var i1 int
		var fac float64
		if n > 5 {
			i1 = 3
			a2 := -m[2]/ssumm2 + poly(c2, rsn)
			fac = math.Sqrt((summ2 - 2*m[1]*m[1] - 2*m[2]*m[2]) / (1 - 2*a1*a1 - 2*a2*a2))
			a[2] = a2
		} else {
			i1 = 2
			fac = math.Sqrt((summ2 - 2*m[1]*m[1]) / (1 - 2*a1*a1))
		}
		a[1] = a1
		for i := i1; i <= nn2; i++ {
			a[i] = -m[i] / fac
		}
	}
	// W = (Σ a_i (y_(n+1−i) − y_(i)))² / Σ (y − ȳ)², centred for accuracy.
	var mean float64
	for _, v := range y {
		mean += v
	}
	mean /= an
	var ssq, num float64
	for _, v := range y {
		ssq += (v - mean) * (v - mean)
	}
	for i := 1; i <= nn2; i++ {
		num += a[i] * (y[n-i] - y[i-1])
	}
	w = num * num / ssq
	if w > 1 {
		w = 1
	}
	if n == 3 {
		const pi6, stqr = 1.90985931710274, 1.04719755119660 // 6/π, asin(sqrt(3/4))
		p = pi6 * (math.Asin(math.Sqrt(w)) - stqr)
		return w, math.Max(p, 0), true
	}
	w1 := math.Log(1 - w)
	var mu, sd, z float64
	if n <= 11 {
		gamma := poly([]float64{-2.273, 0.459}, an)
		if w1 >= gamma {
			return w, 1e-99, true
		}
		z = -math.Log(gamma - w1)
		mu = poly([]float64{0.544, -0.39978, 0.025054, -6.714e-4}, an)
		sd = math.Exp(poly([]float64{1.3822, -0.77857, 0.062767, -0.0020322}, an))
	} else {
		xx := math.Log(an)
		z = w1
		mu = poly([]float64{-1.5861, -0.31082, -0.083751, 0.0038915}, xx)
		sd = math.Exp(poly([]float64{-0.4803, -0.082676, 0.0030302}, xx))
	}
	// Upper tail by erfc, so that tiny p-values keep their digits.
	p = 0.5 * math.Erfc((z-mu)/(sd*math.Sqrt2))
	return w, p, true
}

// BrownForsythe returns the Brown–Forsythe test of equal variances across
// groups: the one-way ANOVA F of |y − median of its group| (Brown and
// Forsythe 1974, "Robust tests for the equality of variances", JASA 69,
// 364–367; Levene's test with the median as centre), with its degrees of
// freedom and p-value. ok is false with fewer than 2 groups or when every
// deviation is zero.
func BrownForsythe(groups [][]float64) (f float64, df1, df2 int, p float64, ok bool) {
	own := make([][]float64, len(groups))
	for i, g := range groups {
		own[i] = append([]float64(nil), g...)
	}
	return brownForsythe(own)
}

// brownForsythe is BrownForsythe overwriting the groups (each is reordered
// and replaced by its absolute deviations, which the test uses in any
// order).
func brownForsythe(groups [][]float64) (f float64, df1, df2 int, p float64, ok bool) {
	k := 0
	var z [][]float64
	for _, s := range groups {
		if len(s) == 0 {
			continue
		}
		// The median by selection, O(n) (selectKth).
		h := len(s) / 2
		med := selectKth(s, h)
		if len(s)%2 == 0 {
			med = (slices.Max(s[:h]) + med) / 2
		}
		for i, v := range s {
			s[i] = math.Abs(v - med)
		}
		z = append(z, s)
		k++
	}
	n := 0
	var grand float64
	for _, d := range z {
		for _, v := range d {
			grand += v
		}
		n += len(d)
	}
	if k < 2 || n <= k {
		return math.NaN(), 0, 0, math.NaN(), false
	}
	// F is scale-free: scale the deviations by the largest, so that their
	// squares neither underflow nor overflow.
	var big0 float64
	for _, d := range z {
		for _, v := range d {
			big0 = math.Max(big0, v)
		}
	}
	if big0 == 0 || math.IsNaN(big0) || math.IsInf(big0, 0) {
		return math.NaN(), k - 1, n - k, math.NaN(), false
	}
	for _, d := range z {
		for i := range d {
			d[i] /= big0
		}
	}
	grand /= big0
	grand /= float64(n)
	var ssb, ssw float64
	for _, d := range z {
		var m float64
		for _, v := range d {
			m += v
		}
		m /= float64(len(d))
		ssb += float64(len(d)) * (m - grand) * (m - grand)
		for _, v := range d {
			ssw += (v - m) * (v - m)
		}
	}
	if ssw == 0 {
		return math.NaN(), k - 1, n - k, math.NaN(), false
	}
	df1, df2 = k-1, n-k
	f = (ssb / float64(df1)) / (ssw / float64(df2))
	p = prob.FSurvival(f, float64(df1), float64(df2))
	return f, df1, df2, p, true
}
