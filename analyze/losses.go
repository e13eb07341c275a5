package analyze

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// Losses is the flow of units by treatment: enrolled, lost (no value),
// excluded (set aside) and analysed, with the reasons recorded, as animal
// study reporting asks for.
type Losses struct {
	Rows []LossRow `json:"rows"`
	// Test compares the proportion of units not analysed between
	// treatments: Pearson's χ² test of homogeneity on the treatments ×
	// (analysed, not analysed) table (k − 1 df; approximate when expected
	// counts are below 5). Run when any unit is lost or excluded.
	Test *LossTest `json:"test,omitempty"`
	// Warning is set when the losses differ between treatments at α.
	Warning string `json:"warning,omitempty"`
}

// LossRow is one treatment's line of the loss table.
type LossRow struct {
	Treatment string   `json:"treatment"`
	Enrolled  int      `json:"enrolled"`
	Lost      int      `json:"lost"`
	Excluded  int      `json:"excluded"`
	Analysed  int      `json:"analysed"`
	Reasons   []string `json:"reasons,omitempty"`
}

// LossTest is the test of equal loss proportions.
type LossTest struct {
	Name string  `json:"name"`
	Chi2 float64 `json:"chi2"`
	DF   int     `json:"df"`
	P    float64 `json:"p"`
	// MinExpected is the smallest expected count.
	MinExpected float64 `json:"min_expected"`
}

// LossTable builds the loss table of d (its observations and d.Lost);
// alpha 0 means 0.05. It returns nil when nothing was lost.
func LossTable(d Data) (*Losses, error) {
	if len(d.Lost) == 0 {
		return nil, nil
	}
	key := func(levels []string) string { return strings.Join(levels, " × ") }
	rows := map[string]*LossRow{}
	var order []string
	add := func(k string) *LossRow {
		r, ok := rows[k]
		if !ok {
			r = &LossRow{Treatment: k}
			rows[k] = r
			order = append(order, k)
		}
		return r
	}
	n := d.Values.Len()
	if d.Subsamples != nil {
		n = len(d.Subsamples)
	}
	for i := 0; i < n; i++ {
		var lv []string
		for _, f := range d.Factors {
			lv = append(lv, f.Values.At(i))
		}
		r := add(key(lv))
		r.Enrolled++
		r.Analysed++
	}
	for _, u := range d.Lost {
		if len(u.Levels) != len(d.Factors) {
			return nil, fmt.Errorf("lost unit %s: %d factor levels for %d factors", u.Unit, len(u.Levels), len(d.Factors))
		}
		r := add(key(u.Levels))
		r.Enrolled++
		switch u.Status {
		case "", "lost":
			r.Lost++
		case "excluded":
			r.Excluded++
		default:
			return nil, fmt.Errorf("lost unit %s: status %q must be lost or excluded", u.Unit, u.Status)
		}
		if u.Reason != "" {
			who := u.Unit
			if who == "" {
				who = "a unit"
			}
			r.Reasons = append(r.Reasons, who+": "+u.Reason)
		}
	}
	// Level order of the design where it is known.
	if len(d.Factors) == 1 && d.Factors[0].Levels != nil {
		pos := map[string]int{}
		for i, l := range d.Factors[0].Levels {
			pos[l] = i
		}
		sort.SliceStable(order, func(a, b int) bool { return pos[order[a]] < pos[order[b]] })
	}
	out := &Losses{}
	for _, k := range order {
		out.Rows = append(out.Rows, *rows[k])
	}
	out.Test = lossTest(out.Rows)
	return out, nil
}

// lossTest is Pearson's χ² test of homogeneity of the not-analysed
// proportions (Pearson 1900; without continuity correction).
func lossTest(rows []LossRow) *LossTest {
	if len(rows) < 2 {
		return nil
	}
	var N, L float64
	for _, r := range rows {
		N += float64(r.Enrolled)
		L += float64(r.Lost + r.Excluded)
	}
	if L == 0 || L == N {
		return nil
	}
	var chi2 float64
	minE := math.Inf(1)
	for _, r := range rows {
		n := float64(r.Enrolled)
		obs := [2]float64{float64(r.Lost + r.Excluded), float64(r.Analysed)}
		exp := [2]float64{n * L / N, n * (N - L) / N}
		for j := range obs {
			chi2 += (obs[j] - exp[j]) * (obs[j] - exp[j]) / exp[j]
			minE = math.Min(minE, exp[j])
		}
	}
	df := len(rows) - 1
	// The upper tail directly, as the regularised upper incomplete gamma.
	p := distuv.ChiSquared{K: float64(df)}.Survival(chi2)
	return &LossTest{Name: "Pearson χ² test of equal loss proportions", Chi2: chi2, DF: df, P: p, MinExpected: minE}
}

// warn sets the warning when the losses differ at alpha.
func (l *Losses) warn(alpha float64) {
	if l == nil || l.Test == nil || !(l.Test.P < alpha) {
		return
	}
	approx := ""
	if l.Test.MinExpected < 5 {
		approx = "; some expected counts are below 5, so the p-value is approximate"
	}
	l.Warning = fmt.Sprintf("The proportion of units lost or excluded differs between treatments (%s: χ² = %.3g, df %d, p = %.3g%s). If losses depend on the treatment or on the outcome, the comparison of the analysed units is biased; report the losses, and discuss the analysis with a statistician.", l.Test.Name, l.Test.Chi2, l.Test.DF, l.Test.P, approx)
}

// Replicated reports whether every treatment (combination of factor
// levels) appears at least twice in every block of d, so that the block ×
// treatment interaction can be estimated from the replicates within blocks:
// a generalised randomised block design. False without a block column.
func Replicated(d Data) bool {
	if d.Block == nil || len(d.Factors) == 0 {
		return false
	}
	count := map[string]int{}
	blocks := map[string]bool{}
	trts := map[string]bool{}
	for i := range d.Block.Values.Len() {
		b := d.Block.Values.At(i)
		var lv []string
		for _, f := range d.Factors {
			lv = append(lv, f.Values.At(i))
		}
		t := strings.Join(lv, "\x00")
		blocks[b], trts[t] = true, true
		count[b+"\x01"+t]++
	}
	for b := range blocks {
		for t := range trts {
			if count[b+"\x01"+t] < 2 {
				return false
			}
		}
	}
	return true
}
