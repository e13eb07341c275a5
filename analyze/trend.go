package analyze

import (
	"fmt"
	"math"
	"strconv"

	"gonum.org/v1/gonum/stat/distuv"
)

// Trend holds the orthogonal polynomial contrasts of a quantitative factor.
type Trend struct {
	Term   string      `json:"term"`
	Levels []float64   `json:"levels"`
	Rows   []TrendPart `json:"contrasts"`
	DF     int         `json:"df"`
	Note   string      `json:"note"`
}

// TrendPart is one polynomial degree.
type TrendPart struct {
	Term   string    `json:"term"`
	Name   string    `json:"name"`
	Degree int       `json:"degree"`
	Coef   []float64 `json:"coefficients"`
	// Estimate is Σ c_j·LSmean_j with the coefficients scaled to unit
	// length, SE its standard error; T = Estimate/SE and P its two-sided
	// p-value on the error df (not adjusted for multiplicity); SS = T²·MSe
	// is the part of the factor's SS the degree carries.
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	T        float64 `json:"t"`
	P        float64 `json:"p"`
	SS       float64 `json:"ss"`
}

// TrendContrasts decomposes factor fi (whose levels are numbers, in any
// spacing) into orthogonal polynomial contrasts of degree 1..L−1 of its
// least-squares means: the coefficients are the Gram–Schmidt
// orthogonalisation, with equal weights, of 1, x, x², … at the level values
// x (centred and scaled first for accuracy), each normalised to unit length
// (Kirk 2013, Experimental Design, 4th ed., section 6.4; for equally spaced
// levels they are the tabled coefficients, e.g. −3, −1, 1, 3 for four).
// Each degree is tested by t on the error df. In a balanced design the
// degrees' SS add up to the factor's SS.
func TrendContrasts(d Data, t *Table, fi int) (*Trend, error) {
	name := d.Factors[fi].Name
	lv := t.est.levels[fi]
	x := make([]float64, len(lv))
	for i, l := range lv {
		v, err := strconv.ParseFloat(l, 64)
		if err != nil {
			return nil, fmt.Errorf("--trend %s: level %q is not a number; trend contrasts need numeric levels such as doses", name, l)
		}
		x[i] = v
	}
	k := len(x)
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= float64(k)
	var sd float64
	for _, v := range x {
		sd = math.Max(sd, math.Abs(v-mean))
	}
	if sd == 0 {
		return nil, fmt.Errorf("--trend %s: the levels are all the same number", name)
	}
	seen := map[float64]bool{}
	for _, v := range x {
		if seen[v] {
			return nil, fmt.Errorf("--trend %s: two levels have the same value %g", name, v)
		}
		seen[v] = true
	}
	basis := [][]float64{}
	one := make([]float64, k)
	for i := range one {
		one[i] = 1 / math.Sqrt(float64(k))
	}
	basis = append(basis, one)
	ls := t.LSMeans(fi)
	tr := &Trend{Term: name, Levels: x, DF: t.Residual.DF}
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(t.Residual.DF)}
	for deg := 1; deg < k; deg++ {
		c := make([]float64, k)
		for i := range c {
			c[i] = math.Pow((x[i]-mean)/sd, float64(deg))
		}
		// Modified Gram–Schmidt, twice for orthogonality to rounding.
		for pass := 0; pass < 2; pass++ {
			for _, b := range basis {
				var dot float64
				for i := range c {
					dot += c[i] * b[i]
				}
				for i := range c {
					c[i] -= dot * b[i]
				}
			}
		}
		var norm float64
		for _, v := range c {
			norm += v * v
		}
		norm = math.Sqrt(norm)
		for i := range c {
			c[i] /= norm
		}
		basis = append(basis, c)
		// Sign: the highest level's coefficient positive.
		if c[argmax(x)] < 0 {
			for i := range c {
				c[i] = -c[i]
			}
		}
		full := make([]float64, len(t.est.b))
		var est float64
		for j := range c {
			cj := t.est.contrast(fi, j)
			for i := range full {
				full[i] += c[j] * cj[i]
			}
			est += c[j] * ls[j].Mean
		}
		se := t.ResidSD * math.Sqrt(t.est.quad(full))
		p := TrendPart{Term: name, Name: degreeName(deg), Degree: deg, Coef: append([]float64(nil), c...), Estimate: est, SE: se}
		p.T = est / se
		p.P = 2 * st.Survival(math.Abs(p.T))
		p.SS = p.T * p.T * t.Residual.MS
		tr.Rows = append(tr.Rows, p)
	}
	tr.Note = fmt.Sprintf("Orthogonal polynomial contrasts of the LS means of %s at its level values (%s spacing); each p-value is for its degree alone, not adjusted for multiplicity: plan which degrees matter (usually linear, perhaps quadratic) before reading them.", name, spacing(x))
	return tr, nil
}

func argmax(x []float64) int {
	j := 0
	for i, v := range x {
		if v > x[j] {
			j = i
		}
	}
	return j
}

func degreeName(d int) string {
	switch d {
	case 1:
		return "linear"
	case 2:
		return "quadratic"
	case 3:
		return "cubic"
	case 4:
		return "quartic"
	}
	return fmt.Sprintf("degree %d", d)
}

func spacing(x []float64) string {
	s := append([]float64(nil), x...)
	for i := 1; i < len(s); i++ {
		for j := i; j > 0 && s[j] < s[j-1]; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
	for i := 2; i < len(s); i++ {
		if math.Abs((s[i]-s[i-1])-(s[1]-s[0])) > 1e-9*math.Abs(s[1]-s[0]) {
			return "unequal"
		}
	}
	return "equal"
}
