package analyze

import (
	"fmt"
	"math"
	"math/big"
	"sort"
	"strconv"
)

// Column is a categorical variable: one label per observation, and the
// order of its levels (nil: order of first appearance).
type Column struct {
	Name   string
	Levels []string
	Values []string
}

// Data is one response with its design columns, complete observations only.
type Data struct {
	Response string
	// Values holds each observation as decimal text ("12.40", "1e3") or an
	// exact ratio ("31/3").
	Values []string
	// Subsamples, when set instead of Values, holds each observation's
	// measurements; they are averaged to the unit (see Average).
	Subsamples [][]string
	Factors    []Column
	// Block is the blocking column, or nil.
	Block *Column
	// BlockInteraction adds the block × treatment interaction to the model:
	// a generalised randomised block design, with each treatment more than
	// once in every block, estimates it from the replicates within blocks.
	BlockInteraction bool
	// Units and Where identify each observation (unit ID; for example
	// `Entry!F7`), for listing unusual residuals. Either may be nil.
	Units, Where []string
	// Lost lists the enrolled units that are not among the observations
	// (no value, or excluded), for the loss table. Nil when the reader
	// knows of none.
	Lost []LostUnit
}

// LostUnit is an enrolled unit with no analysed value.
type LostUnit struct {
	Unit string
	// Levels holds the unit's level of each factor, in Data.Factors order.
	Levels []string
	// Status is "lost" (no value; also when empty) or "excluded" (a value
	// was recorded and set aside, for example by protocol).
	Status string
	// Reason is the recorded reason, if any.
	Reason string
}

// levels returns the level order of c and the index of each observation.
func (c Column) levels() ([]string, []int, error) {
	order := c.Levels
	if order == nil {
		seen := map[string]bool{}
		for _, v := range c.Values {
			if !seen[v] {
				seen[v] = true
				order = append(order, v)
			}
		}
	}
	idx := map[string]int{}
	for i, l := range order {
		idx[l] = i
	}
	out := make([]int, len(c.Values))
	used := make([]bool, len(order))
	for i, v := range c.Values {
		j, ok := idx[v]
		if !ok {
			return nil, nil, fmt.Errorf("column %q: value %q is not one of its levels", c.Name, v)
		}
		out[i] = j
		used[j] = true
	}
	// Drop levels with no observations, keeping the order.
	var kept []string
	remap := make([]int, len(order))
	for j, l := range order {
		if used[j] {
			remap[j] = len(kept)
			kept = append(kept, l)
		}
	}
	for i := range out {
		out[i] = remap[out[i]]
	}
	return kept, out, nil
}

// decimal is a number written in decimal: m·10^e exactly.
type decimal struct {
	m int64
	e int
}

// parseDecimal reads [sign]digits[.digits][e[sign]digits] into m·10^e when
// the significant digits fit in an int64 (18 digits); ok is false otherwise,
// and for anything else (NaN, Inf, hexadecimal), which the slow path then
// judges.
func parseDecimal(s string) (decimal, bool) {
	var d decimal
	i, neg := 0, false
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		neg = s[i] == '-'
		i++
	}
	digits, frac, seenDot := 0, 0, false
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			if digits >= 18 {
				return d, false
			}
			if d.m != 0 || c != '0' {
				digits++
			}
			d.m = d.m*10 + int64(c-'0')
			if seenDot {
				frac++
			}
		case c == '.' && !seenDot:
			seenDot = true
		default:
			goto exp
		}
	}
exp:
	if i < len(s) {
		if s[i] != 'e' && s[i] != 'E' {
			return d, false
		}
		v, err := strconv.Atoi(s[i+1:])
		if err != nil || v > 300 || v < -300 {
			return d, false
		}
		d.e = v
	}
	if i == 0 || (i == 1 && neg) {
		return d, false
	}
	d.e -= frac
	if neg {
		d.m = -d.m
	}
	return d, true
}

// pow10 holds the exactly representable powers of ten.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// centred parses the decimal texts, subtracts the median observation exactly
// and returns the centred float64 values with the shift. Each centred value
// is rounded once: the difference is formed exactly (in int64 at the common
// exponent, or with math/big when that overflows) and then divided by an
// exact power of ten.
func centred(values []string) ([]float64, *big.Rat, error) {
	if len(values) == 0 {
		return nil, nil, fmt.Errorf("no observations")
	}
	decs := make([]decimal, len(values))
	fast := true
	floats := make([]float64, len(values))
	for i, s := range values {
		d, ok := parseDecimal(s)
		if !ok {
			fast = false
		}
		decs[i] = d
		f, err := strconv.ParseFloat(s, 64)
		if err != nil {
			// An exact ratio such as a subsample mean, "31/3".
			r, ok := new(big.Rat).SetString(s)
			if !ok {
				return nil, nil, fmt.Errorf("observation %d: %q is not a decimal number", i+1, s)
			}
			f, _ = r.Float64()
		}
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return nil, nil, fmt.Errorf("observation %d: %q is not a decimal number", i+1, s)
		}
		floats[i] = f
	}
	// The median by value (ties by position) is the shift.
	order := make([]int, len(values))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return floats[order[a]] < floats[order[b]] })
	mid := order[len(order)/2]
	shift, _ := new(big.Rat).SetString(values[mid])
	out := make([]float64, len(values))
	if fast {
		minE := decs[mid].e
		for _, d := range decs {
			minE = min(minE, d.e)
		}
		ok := true
		for i, d := range decs {
			a, okA := scaleTo(d, minE)
			b, okB := scaleTo(decs[mid], minE)
			diff := a - b
			if !okA || !okB || (a > 0) != (b > 0) && (diff > 0) != (a > 0) || -minE >= len(pow10) || diff > 1<<53 || diff < -(1<<53) {
				ok = false
				break
			}
			if minE <= 0 {
				out[i] = float64(diff) / pow10[-minE]
			} else {
				out[i] = float64(diff) * math.Pow(10, float64(minE))
			}
		}
		if ok {
			return out, shift, nil
		}
	}
	var r, d big.Rat
	for i, s := range values {
		r.SetString(s)
		d.Sub(&r, shift)
		out[i], _ = d.Float64()
	}
	return out, shift, nil
}

// scaleTo returns d's mantissa at exponent e ≤ d.e, reporting overflow.
func scaleTo(d decimal, e int) (int64, bool) {
	m := d.m
	for k := d.e; k > e; k-- {
		if m > math.MaxInt64/10 || m < math.MinInt64/10 {
			return 0, false
		}
		m *= 10
	}
	return m, true
}

// shiftedMean returns shift + mean of y over idx (all of y for nil idx),
// the mean summed with Neumaier's compensation (Neumaier 1974, ZAMM 54,
// 39–51) so that it keeps full precision for long columns.
func shiftedMean(y []float64, shift float64, idx []int) float64 {
	var sum, comp float64
	n := 0
	add := func(v float64) {
		t := sum + v
		if math.Abs(sum) >= math.Abs(v) {
			comp += (sum - t) + v
		} else {
			comp += (v - t) + sum
		}
		sum = t
		n++
	}
	if idx == nil {
		for _, v := range y {
			add(v)
		}
	} else {
		for _, i := range idx {
			add(y[i])
		}
	}
	return shift + (sum+comp)/float64(n)
}
