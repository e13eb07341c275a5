package analyze

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Repeated is one response measured on the same units at several times.
type Repeated struct {
	Response string
	// Times names the measurement times in order; TimeValues, when set,
	// gives each a number (days) for slopes and areas.
	Times      []string
	TimeValues []float64
	// Treatment is the between-unit treatment of each unit (a factorial's
	// combination as one label); Units the unit IDs.
	Treatment string
	Units     []string
	Groups    []string
	// Values[u][t] is unit u's value at time t as decimal text, "" when
	// missing.
	Values [][]string
}

// RMTerm is a row of the split-plot-in-time table.
type RMTerm struct {
	Source string  `json:"source"`
	DF     float64 `json:"df"`
	SS     float64 `json:"ss"`
	MS     float64 `json:"ms"`
	F      float64 `json:"f,omitempty"`
	P      float64 `json:"p,omitempty"`
	// PGG and PHF are the p-values with the within-unit df multiplied by
	// the Greenhouse–Geisser and Huynh–Feldt epsilons (within-unit terms).
	PGG float64 `json:"p_greenhouse_geisser,omitempty"`
	PHF float64 `json:"p_huynh_feldt,omitempty"`
	// Error names the error line the F uses.
	Error string `json:"error,omitempty"`
}

// RMResult is the split-plot-in-time analysis.
type RMResult struct {
	Response  string   `json:"response"`
	Treatment string   `json:"treatment"`
	Times     []string `json:"times"`
	Units     int      `json:"units"`
	Dropped   []string `json:"units_dropped,omitempty"`
	Terms     []RMTerm `json:"terms"`
	// Mauchly's test of sphericity of the within-unit contrasts.
	MauchlyW  float64 `json:"mauchly_w"`
	MauchlyX2 float64 `json:"mauchly_chisq"`
	MauchlyDF int     `json:"mauchly_df"`
	MauchlyP  float64 `json:"mauchly_p"`
	EpsGG     float64 `json:"epsilon_greenhouse_geisser"`
	EpsHF     float64 `json:"epsilon_huynh_feldt"`
	// Profile holds the mean, SD, n and 95% interval of each treatment at
	// each time.
	Profile [][]ProfilePoint `json:"profile"`
	// PerTime holds Tukey–Kramer comparisons of the treatments at each
	// time, on the pooled between-unit error (Satterthwaite df).
	PerTime [][]PairTest `json:"per_time_comparisons"`
	Alpha   float64      `json:"alpha"`
	Notes   []string     `json:"notes,omitempty"`
}

// ProfilePoint is one treatment at one time.
type ProfilePoint struct {
	Group string  `json:"treatment"`
	Time  string  `json:"time"`
	N     int     `json:"n"`
	Mean  float64 `json:"mean"`
	SD    float64 `json:"sd"`
	Lower float64 `json:"ci_lower"`
	Upper float64 `json:"ci_upper"`
}

// parsed returns the values as floats (NaN for missing), checking the
// shape.
func (r Repeated) parsed() ([][]float64, error) {
	k := len(r.Times)
	if k < 2 {
		return nil, errors.New("repeated measurements need at least two times")
	}
	if len(r.Units) != len(r.Values) || len(r.Groups) != len(r.Values) {
		return nil, fmt.Errorf("%d units, %d treatment labels and %d rows of values: one of each per unit", len(r.Units), len(r.Groups), len(r.Values))
	}
	if r.TimeValues != nil && len(r.TimeValues) != k {
		return nil, fmt.Errorf("%d time values for %d times", len(r.TimeValues), k)
	}
	out := make([][]float64, len(r.Values))
	for u, row := range r.Values {
		if len(row) != k {
			return nil, fmt.Errorf("unit %s has %d values for %d times", r.Units[u], len(row), k)
		}
		out[u] = make([]float64, k)
		for t, s := range row {
			if strings.TrimSpace(s) == "" {
				out[u][t] = math.NaN()
				continue
			}
			v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return nil, fmt.Errorf("unit %s, time %s: %q is not a number", r.Units[u], r.Times[t], s)
			}
			out[u][t] = v
		}
	}
	return out, nil
}

// orthoContrasts returns k−1 orthonormal contrasts of k times (rows), by
// Gram–Schmidt on the Helmert contrasts.
func orthoContrasts(k int) [][]float64 {
	c := make([][]float64, k-1)
	for j := 1; j < k; j++ {
		v := make([]float64, k)
		for i := 0; i < j; i++ {
			v[i] = 1
		}
		v[j] = -float64(j)
		var s float64
		for _, x := range v {
			s += x * x
		}
		s = math.Sqrt(s)
		for i := range v {
			v[i] /= s
		}
		c[j-1] = v
	}
	return c
}

// SplitPlotInTime analyses complete units (every time present; units with
// a missing time are left out and named) as a split plot in time: the
// treatment is tested against the variation between units within
// treatments, time and treatment × time against the within-unit residual.
// With n_g units in treatment g (N in all) and k times, the within-unit
// values are carried by k − 1 orthonormal contrasts z_u of each unit's
// profile; SS(time) = N‖z̄‖², SS(treatment × time) = Σ n_g‖z̄_g − z̄‖² and
// SS(residual) = Σ‖z_u − z̄_g‖² (the sequential sums of squares of the
// model treatment, unit(treatment), time, treatment × time, which are
// the usual ones for balanced groups).
//
// Sphericity: with S the pooled within-treatment covariance of z (df
// ν = N − g, p = k − 1), Mauchly's W = det S/(tr S/p)^p with
// χ² = −ν(1 − (2p² + p + 2)/(6pν)) ln W on p(p+1)/2 − 1 df (Mauchly 1940,
// "Significance test for sphericity of a normal n-variate distribution",
// Ann. Math. Statist. 11, 204–209); the Greenhouse–Geisser epsilon
// ε̂ = (tr S)²/(p tr S²) (Greenhouse and Geisser 1959, Psychometrika 24,
// 95–112; Box 1954) and the Huynh–Feldt epsilon
// ε̃ = ((ν + 1)p ε̂ − 2)/(p(ν − p ε̂)), capped at 1 (Huynh and Feldt 1976,
// J. Educ. Statist. 1, 69–82, with the N − g + 1 of Lecoutre 1991,
// J. Educ. Statist. 16, 371–372). Both corrected p-values are reported.
//
// Per-time comparisons: treatments at one time differ with variance
// (σ²_unit + σ²_e)(1/n_a + 1/n_b), estimated by
// MS_w = [MS_units + (k − 1) MS_residual]/k on Satterthwaite's df
// (Cochran and Cox 1957, Experimental Designs, section 7.16), with
// Tukey–Kramer adjustment over the treatments at that time.
// Checked against statsmodels (OLS anova_lm, AnovaRM) and an independent
// numpy computation of the formulas (testdata/reference/gen_repeated.py).
func SplitPlotInTime(r Repeated, alpha float64) (*RMResult, error) {
	if alpha == 0 {
		alpha = 0.05
	}
	vals, err := r.parsed()
	if err != nil {
		return nil, err
	}
	k := len(r.Times)
	res := &RMResult{Response: r.Response, Treatment: r.Treatment, Times: r.Times, Alpha: alpha}
	var keep []int
	for u, row := range vals {
		ok := true
		for _, v := range row {
			ok = ok && !math.IsNaN(v)
		}
		if ok {
			keep = append(keep, u)
		} else {
			res.Dropped = append(res.Dropped, r.Units[u])
		}
	}
	if len(res.Dropped) > 0 {
		res.Notes = append(res.Notes, fmt.Sprintf("%d unit(s) with a missing time were left out of the split plot in time: %s. A summary measure (--summary slope|auc|final) keeps them.", len(res.Dropped), strings.Join(res.Dropped, ", ")))
	}
	// Groups in order of first appearance.
	gIdx := map[string]int{}
	var gNames []string
	for _, u := range keep {
		if _, ok := gIdx[r.Groups[u]]; !ok {
			gIdx[r.Groups[u]] = len(gNames)
			gNames = append(gNames, r.Groups[u])
		}
	}
	g := len(gNames)
	N := len(keep)
	if g < 1 || N-g < 2 {
		return nil, fmt.Errorf("%d complete units in %d treatments leave too few for the error between units", N, g)
	}
	ng := make([]int, g)
	for _, u := range keep {
		ng[gIdx[r.Groups[u]]]++
	}
	// Centre at the grand mean for accuracy.
	var gm float64
	for _, u := range keep {
		for _, v := range vals[u] {
			gm += v
		}
	}
	gm /= float64(N * k)
	unitMean := make([]float64, N)
	groupMean := make([]float64, g)
	for i, u := range keep {
		for _, v := range vals[u] {
			unitMean[i] += v - gm
		}
		unitMean[i] /= float64(k)
		groupMean[gIdx[r.Groups[u]]] += unitMean[i]
	}
	for j := range groupMean {
		groupMean[j] /= float64(ng[j])
	}
	var ssTrt, ssUnits float64
	for j := range groupMean {
		ssTrt += float64(ng[j]*k) * groupMean[j] * groupMean[j]
	}
	for i, u := range keep {
		d := unitMean[i] - groupMean[gIdx[r.Groups[u]]]
		ssUnits += float64(k) * d * d
	}
	// Within-unit contrasts.
	C := orthoContrasts(k)
	p := k - 1
	z := make([][]float64, N)
	zbar := make([]float64, p)
	zg := make([][]float64, g)
	for j := range zg {
		zg[j] = make([]float64, p)
	}
	for i, u := range keep {
		z[i] = make([]float64, p)
		for c := range C {
			for t, v := range vals[u] {
				z[i][c] += C[c][t] * (v - gm)
			}
			zbar[c] += z[i][c] / float64(N)
			zg[gIdx[r.Groups[u]]][c] += z[i][c] / float64(ng[gIdx[r.Groups[u]]])
		}
	}
	var ssTime, ssInt, ssRes float64
	for c := 0; c < p; c++ {
		ssTime += float64(N) * zbar[c] * zbar[c]
		for j := range zg {
			d := zg[j][c] - zbar[c]
			ssInt += float64(ng[j]) * d * d
		}
	}
	E := mat.NewSymDense(p, nil)
	for i, u := range keep {
		j := gIdx[r.Groups[u]]
		for a := 0; a < p; a++ {
			da := z[i][a] - zg[j][a]
			ssRes += da * da
			for b := a; b < p; b++ {
				E.SetSym(a, b, E.At(a, b)+da*(z[i][b]-zg[j][b]))
			}
		}
	}
	nu := float64(N - g)
	dfTrt, dfUnits := float64(g-1), nu
	dfTime, dfInt, dfRes := float64(p), float64((g-1)*p), nu*float64(p)
	msUnits, msRes := ssUnits/dfUnits, ssRes/dfRes
	res.Units = N
	res.sphericity(E, nu, p, N, g)
	row := func(src string, df, ss float64, errName string, errMS, errDF float64, within bool) RMTerm {
		t := RMTerm{Source: src, DF: df, SS: ss, MS: ss / df, Error: errName}
		if df > 0 && errMS > 0 {
			t.F = t.MS / errMS
			t.P = distuv.F{D1: df, D2: errDF}.Survival(t.F)
			if within {
				t.PGG = distuv.F{D1: df * res.EpsGG, D2: errDF * res.EpsGG}.Survival(t.F)
				t.PHF = distuv.F{D1: df * res.EpsHF, D2: errDF * res.EpsHF}.Survival(t.F)
			}
		}
		return t
	}
	if g > 1 {
		res.Terms = append(res.Terms, row(r.Treatment, dfTrt, ssTrt, "units within "+r.Treatment, msUnits, dfUnits, false))
	}
	res.Terms = append(res.Terms, RMTerm{Source: "units within " + r.Treatment, DF: dfUnits, SS: ssUnits, MS: msUnits})
	res.Terms = append(res.Terms, row("time", dfTime, ssTime, "residual within units", msRes, dfRes, true))
	if g > 1 {
		res.Terms = append(res.Terms, row(r.Treatment+" × time", dfInt, ssInt, "residual within units", msRes, dfRes, true))
	}
	res.Terms = append(res.Terms, RMTerm{Source: "residual within units", DF: dfRes, SS: ssRes, MS: msRes})
	res.profile(r, vals, keep, gIdx, gNames, ng, gm, msUnits, msRes, nu, k)
	return res, nil
}

// sphericity fills Mauchly's test and the two epsilons from the pooled
// within-treatment SSCP matrix E of the orthonormal contrasts.
func (res *RMResult) sphericity(E *mat.SymDense, nu float64, p, N, g int) {
	P := float64(p)
	S := mat.NewSymDense(p, nil)
	S.ScaleSym(1/nu, E)
	var tr, tr2 float64
	for a := 0; a < p; a++ {
		tr += S.At(a, a)
		for b := 0; b < p; b++ {
			tr2 += S.At(a, b) * S.At(b, a)
		}
	}
	res.EpsGG = tr * tr / (P * tr2)
	hf := ((nu+1)*P*res.EpsGG - 2) / (P * (nu - P*res.EpsGG))
	res.EpsHF = math.Min(1, hf)
	if p == 1 {
		res.MauchlyW, res.MauchlyP, res.EpsGG, res.EpsHF = 1, 1, 1, 1
		return
	}
	det := mat.Det(S)
	res.MauchlyW = det / math.Pow(tr/P, P)
	d := 1 - (2*P*P+P+2)/(6*P*nu)
	res.MauchlyX2 = -nu * d * math.Log(res.MauchlyW)
	res.MauchlyDF = p*(p+1)/2 - 1
	res.MauchlyP = distuv.ChiSquared{K: float64(res.MauchlyDF)}.Survival(res.MauchlyX2)
	if res.MauchlyP < res.Alpha {
		res.Notes = append(res.Notes, fmt.Sprintf("Mauchly's test rejects sphericity (p = %.3g): read the Greenhouse–Geisser (ε = %.3f) or Huynh–Feldt (ε = %.3f) p-values for the within-unit terms, or use a summary measure.", res.MauchlyP, res.EpsGG, res.EpsHF))
	}
}

// profile fills the means by treatment and time and the per-time
// comparisons.
func (res *RMResult) profile(r Repeated, vals [][]float64, keep []int, gIdx map[string]int, gNames []string, ng []int, gm, msUnits, msRes, nu float64, k int) {
	K := float64(k)
	msw := (msUnits + (K-1)*msRes) / K
	dfw := math.Pow(msUnits+(K-1)*msRes, 2) / (msUnits*msUnits/nu + math.Pow((K-1)*msRes, 2)/(nu*(K-1)))
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nu}.Quantile(1 - res.Alpha/2)
	g := len(gNames)
	for t := 0; t < k; t++ {
		var row []ProfilePoint
		for j, name := range gNames {
			pp := ProfilePoint{Group: name, Time: r.Times[t], N: ng[j]}
			var s, s2 float64
			for _, u := range keep {
				if gIdx[r.Groups[u]] == j {
					s += vals[u][t] - gm
				}
			}
			m := s / float64(ng[j])
			for _, u := range keep {
				if gIdx[r.Groups[u]] == j {
					d := vals[u][t] - gm - m
					s2 += d * d
				}
			}
			pp.Mean = m + gm
			if ng[j] > 1 {
				pp.SD = math.Sqrt(s2 / float64(ng[j]-1))
			}
			// The interval uses the pooled between-unit variance at one
			// time, MS_w, on the between-unit df.
			h := tq * math.Sqrt(msw/float64(ng[j]))
			pp.Lower, pp.Upper = pp.Mean-h, pp.Mean+h
			row = append(row, pp)
		}
		res.Profile = append(res.Profile, row)
		if g < 2 {
			continue
		}
		sr := prob.StudentizedRange{K: float64(g), Nu: dfw}
		crit := sr.Quantile(1 - res.Alpha)
		var pairs []PairTest
		for a := 0; a < g; a++ {
			for b := a + 1; b < g; b++ {
				se := math.Sqrt(msw * (1/float64(ng[a]) + 1/float64(ng[b])))
				diff := row[a].Mean - row[b].Mean
				q := math.Abs(diff) / (se / math.Sqrt2)
				pairs = append(pairs, PairTest{Pair: fmt.Sprintf("%s − %s at %s", gNames[a], gNames[b], r.Times[t]), A: gNames[a], B: gNames[b],
					Estimate: diff, SE: se, Stat: q, DF: dfw, P: sr.Survival(q), Lower: diff - crit*se/math.Sqrt2, Upper: diff + crit*se/math.Sqrt2})
			}
		}
		res.PerTime = append(res.PerTime, pairs)
	}
}

// Summary measures of repeated measurements.
const (
	SummarySlope = "slope"
	SummaryAUC   = "auc"
	SummaryFinal = "final"
)

// Summarise reduces each unit's profile to one number, for the ordinary
// ANOVA of the design (Matthews, Altman, Campbell and Royston 1990,
// "Analysis of serial measurements in medical research", BMJ 300,
// 230–235): the least-squares slope on the time values (at least two
// times present), the area under the curve by the trapezoidal rule over
// the times present (the first and last time must be present), or the
// value at the final time. Units lacking what the measure needs are left
// out and named. The result has one observation per unit, with the unit's
// treatment as the factor.
func Summarise(r Repeated, kind string) (Data, []string, error) {
	vals, err := r.parsed()
	if err != nil {
		return Data{}, nil, err
	}
	if (kind == SummarySlope || kind == SummaryAUC) && r.TimeValues == nil {
		return Data{}, nil, fmt.Errorf("the %s needs the times as numbers (days, weeks): give them in the plan's times", kind)
	}
	if r.TimeValues != nil && !sort.Float64sAreSorted(r.TimeValues) {
		return Data{}, nil, errors.New("the time values must increase")
	}
	d := Data{Response: r.Response + " (" + kind + ")", Factors: []Column{{Name: r.Treatment}}}
	var dropped, values, groups, units []string
	k := len(r.Times)
	for u, row := range vals {
		var v float64
		ok := true
		switch kind {
		case SummaryFinal:
			v, ok = row[k-1], !math.IsNaN(row[k-1])
		case SummarySlope:
			var sx, sy, n float64
			for t, y := range row {
				if !math.IsNaN(y) {
					sx += r.TimeValues[t]
					sy += y
					n++
				}
			}
			if n < 2 {
				ok = false
				break
			}
			mx, my := sx/n, sy/n
			var sxy, sxx float64
			for t, y := range row {
				if !math.IsNaN(y) {
					sxy += (r.TimeValues[t] - mx) * (y - my)
					sxx += (r.TimeValues[t] - mx) * (r.TimeValues[t] - mx)
				}
			}
			ok = sxx > 0
			v = sxy / sxx
		case SummaryAUC:
			if math.IsNaN(row[0]) || math.IsNaN(row[k-1]) {
				ok = false
				break
			}
			prev := 0
			for t := 1; t < k; t++ {
				if math.IsNaN(row[t]) {
					continue
				}
				v += (r.TimeValues[t] - r.TimeValues[prev]) * (row[t] + row[prev]) / 2
				prev = t
			}
		default:
			return Data{}, nil, fmt.Errorf("summary %q: must be slope, auc or final", kind)
		}
		if !ok {
			dropped = append(dropped, r.Units[u])
			continue
		}
		values = append(values, strconv.FormatFloat(v, 'g', -1, 64))
		groups = append(groups, r.Groups[u])
		units = append(units, r.Units[u])
	}
	d.Values, d.Factors[0].Values, d.Units = column.Of(values), column.Of(groups), column.Of(units)
	return d, dropped, nil
}
