package analyze

import (
	"fmt"
	"math"
	"strconv"

	"github.com/allotproject/allot/column"
)

// Transformations of the response (Options of the command `--transform`).
const (
	TransformNone  = ""
	TransformLog   = "log"
	TransformSqrt  = "sqrt"
	TransformLogit = "logit"
)

// Transform returns d with every observation replaced by its natural
// logarithm, square root or logit (log(p/(1 − p)), for proportions strictly
// between 0 and 1), written as the shortest decimal that reads back as the
// same float64, so that the exact-decimal centring of the fit applies to the
// transformed values. A value outside the transformation's domain is an
// error that names the unit and the alternatives. Subsamples are transformed
// one by one before they are averaged.
//
// On the log scale, differences of means are log ratios: back-transformed,
// a mean is a geometric mean and a difference a ratio of geometric means;
// on the square-root and logit scales back-transformed means are medians on
// the original scale if the transformed values are symmetric, not means
// (see BackTransform).
func Transform(d Data, kind string) (Data, error) {
	var f func(float64) (float64, bool)
	var domain, instead string
	switch kind {
	case TransformNone:
		return d, nil
	case TransformLog:
		f = func(v float64) (float64, bool) { return math.Log(v), v > 0 }
		domain, instead = "above 0", "use --transform sqrt, or for counts --family poisson"
	case TransformSqrt:
		f = func(v float64) (float64, bool) { return math.Sqrt(v), v >= 0 }
		domain, instead = "0 or more", "analyse without a transformation"
	case TransformLogit:
		f = func(v float64) (float64, bool) { return math.Log(v / (1 - v)), v > 0 && v < 1 }
		domain, instead = "strictly between 0 and 1", "for counts of successes out of trials use --family binomial"
	default:
		return d, fmt.Errorf("transformation %q: must be log, sqrt or logit", kind)
	}
	where := func(i int) string {
		if d.Units.Len() > 0 && i < d.Units.Len() {
			return "unit " + d.Units.At(i)
		}
		return fmt.Sprintf("observation %d", i+1)
	}
	conv := func(i int, s string) (string, error) {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return "", fmt.Errorf("%s: %q is not a number", where(i), s)
		}
		t, ok := f(v)
		if !ok || math.IsInf(t, 0) || math.IsNaN(t) {
			return "", fmt.Errorf("%s: %s cannot be transformed by %s, which needs values %s; %s", where(i), s, kind, domain, instead)
		}
		return strconv.FormatFloat(t, 'g', -1, 64), nil
	}
	out := d
	if d.Values.Len() > 0 {
		vs := make([]string, d.Values.Len())
		for i := range vs {
			v, err := conv(i, d.Values.At(i))
			if err != nil {
				return d, err
			}
			vs[i] = v
		}
		out.Values = column.Of(vs)
	}
	if d.Subsamples != nil {
		out.Subsamples = make([][]string, len(d.Subsamples))
		for i, ss := range d.Subsamples {
			out.Subsamples[i] = make([]string, len(ss))
			for j, s := range ss {
				v, err := conv(i, s)
				if err != nil {
					return d, err
				}
				out.Subsamples[i][j] = v
			}
		}
	}
	return out, nil
}

// BackTransform maps a value on the transformed scale back to the original
// scale: exp for log, the square for sqrt (of a non-negative value), the
// inverse logit for logit. Applied to a mean and its interval limits it
// gives the interval of the back-transformed location (a monotone map keeps
// the coverage); applied to a difference on the log scale, exp gives the
// ratio.
func BackTransform(kind string, v float64) float64 {
	switch kind {
	case TransformLog:
		return math.Exp(v)
	case TransformSqrt:
		if v < 0 {
			return 0
		}
		return v * v
	case TransformLogit:
		return 1 / (1 + math.Exp(-v))
	}
	return v
}
