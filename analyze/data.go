package analyze

import (
	"fmt"
	"math"
	"math/big"
	"math/bits"
	"slices"
	"strconv"

	"github.com/allotproject/allot/column"
)

// Column is a categorical variable: one label per observation, and the
// order of its levels (nil: order of first appearance).
type Column struct {
	Name   string
	Levels []string
	Values column.Text
}

// Data is one response with its design columns, complete observations only.
type Data struct {
	Response string
	// Values holds each observation as decimal text ("12.40", "1e3") or an
	// exact ratio ("31/3").
	Values column.Text
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
	// `Entry!F7`), for listing unusual residuals. Either may be empty.
	Units, Where column.Text
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
		for i := range c.Values.Len() {
			v := c.Values.At(i)
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
	out := make([]int, c.Values.Len())
	used := make([]bool, len(order))
	for i := range c.Values.Len() {
		v := c.Values.At(i)
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
	digits, frac, seenDot, any := 0, 0, false, false
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			any = true
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
	if !any {
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

// centring is a response centred exactly at its median observation.
type centring struct {
	y     []float64 // centred values, each rounded once
	shift *big.Rat  // the median observation, exactly
	// ints, when not nil, holds every centred value exactly as
	// ints[i]·10^exp (decimal inputs whose differences fit in 53 bits).
	ints []int64
	exp  int
}

// centred parses the decimal texts, subtracts the median observation exactly
// and returns the centred float64 values with the shift. Each centred value
// is rounded once: the difference is formed exactly (in int64 at the common
// exponent, or with math/big when that overflows) and then divided by an
// exact power of ten.
func centred(values column.Text) ([]float64, *big.Rat, error) {
	c, err := centre(values)
	return c.y, c.shift, err
}

// centre is centred keeping the exact integer differences. Each text is
// parsed once: a decimal with at most 15 significant digits and a small
// exponent becomes its float64 by one correctly rounded operation on exact
// operands (Clinger 1990, "How to read floating point numbers accurately",
// PLDI '90, 92–101, the fast path), anything else by strconv.ParseFloat or
// math/big. The median (by value, ties by position: element n/2 of the
// stable order) is found by selection in O(n) rather than by sorting.
func centre(values column.Text) (centring, error) {
	n := values.Len()
	if n == 0 {
		return centring{}, fmt.Errorf("no observations")
	}
	ms := make([]int64, n)
	es := make([]int16, n)
	fast := true
	floats := make([]float64, n)
	digits, scale, isDecimal := values.Decimal()
	for i := range n {
		var s string
		var d decimal
		var ok bool
		if isDecimal {
			// Already parsed: digits·10^−scale, as parseDecimal reads the
			// same text.
			d, ok = decimal{m: digits[i], e: -int(scale[i])}, true
		} else {
			s = values.At(i)
			d, ok = parseDecimal(s)
		}
		if ok && d.e >= -22 && d.e <= 22 && d.m <= 1<<53 && d.m >= -(1<<53) {
			ms[i], es[i] = d.m, int16(d.e)
			f := float64(d.m)
			if d.e < 0 {
				f /= pow10[-d.e]
			} else if d.e > 0 {
				f *= pow10[d.e]
			}
			floats[i] = f
			continue
		}
		if isDecimal {
			s = values.At(i) // more than 2^53: the slow path reads the text
		}
		if ok && d.e >= math.MinInt16 && d.e <= math.MaxInt16 {
			ms[i], es[i] = d.m, int16(d.e)
		} else {
			fast = false
		}
		f, err := strconv.ParseFloat(s, 64)
		if err != nil {
			// An exact ratio such as a subsample mean, "31/3".
			r, ok := new(big.Rat).SetString(s)
			if !ok {
				return centring{}, fmt.Errorf("observation %d: %q is not a decimal number", i+1, s)
			}
			f, _ = r.Float64()
		}
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return centring{}, fmt.Errorf("observation %d: %q is not a decimal number", i+1, s)
		}
		floats[i] = f
	}
	mid := medianIndex(floats)
	shift, _ := new(big.Rat).SetString(values.At(mid))
	out := floats // overwritten in place: the parsed values are not needed again
	if fast {
		md := decimal{m: ms[mid], e: int(es[mid])}
		minE := md.e
		for _, e := range es {
			minE = min(minE, int(e))
		}
		b, okB := scaleTo(md, minE)
		ok := okB && -minE < len(pow10)
		for i := 0; ok && i < n; i++ {
			a, okA := scaleTo(decimal{m: ms[i], e: int(es[i])}, minE)
			diff := a - b
			if !okA || (a > 0) != (b > 0) && (diff > 0) != (a > 0) || diff > 1<<53 || diff < -(1<<53) {
				ok = false
				break
			}
			ms[i] = diff
		}
		if ok {
			for i, diff := range ms {
				if minE <= 0 {
					out[i] = float64(diff) / pow10[-minE]
				} else {
					out[i] = float64(diff) * math.Pow(10, float64(minE))
				}
			}
			return centring{y: out, shift: shift, ints: ms, exp: minE}, nil
		}
	}
	var r, d big.Rat
	for i := range n {
		r.SetString(values.At(i))
		d.Sub(&r, shift)
		out[i], _ = d.Float64()
	}
	return centring{y: out, shift: shift}, nil
}

// medianIndex returns the index of element len(x)/2 of x's stable sort
// (ties by position) in O(n): the value by selection, then the position
// among its equals.
func medianIndex(x []float64) int {
	k := len(x) / 2
	v := selectKth(append([]float64(nil), x...), k)
	less := 0
	for _, f := range x {
		if f < v {
			less++
		}
	}
	for i, f := range x {
		if f == v {
			if less == k {
				return i
			}
			less++
		}
	}
	panic("analyze: median not found")
}

// selectKth returns the k-th smallest element of a (0-based), reordering a:
// Hoare's FIND (Hoare 1961, "Algorithm 65: find", CACM 4(7) 321–322) with a
// median-of-three pivot, switching to a full sort after 2·log₂n
// unproductive rounds so that the worst case stays O(n log n) (Musser 1997,
// "Introspective sorting and selection algorithms", Software: Practice and
// Experience 27(8) 983–993). NaNs must not occur.
func selectKth(a []float64, k int) float64 {
	lo, hi := 0, len(a)-1
	budget := 2 * bits.Len(uint(len(a)))
	for hi > lo {
		if budget == 0 {
			slices.Sort(a[lo : hi+1])
			return a[k]
		}
		budget--
		m := lo + (hi-lo)/2
		if a[m] < a[lo] {
			a[m], a[lo] = a[lo], a[m]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[hi] < a[m] {
			a[hi], a[m] = a[m], a[hi]
		}
		p := a[m]
		i, j := lo, hi
		for i <= j {
			for a[i] < p {
				i++
			}
			for a[j] > p {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return a[k]
		}
	}
	return a[k]
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
