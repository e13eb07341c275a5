package power

import "fmt"

// Resource-equation bounds on the error degrees of freedom (Mead 1988).
const (
	ResourceLow  = 10
	ResourceHigh = 20
)

// ResourceAnswer is the resource-equation range of a design: the n (units
// per group, or blocks) whose error df E lies within 10–20.
type ResourceAnswer struct {
	Design  string `json:"design"`
	Cells   int    `json:"groups"`
	Blocked bool   `json:"blocked"`
	NUnit   string `json:"n_unit"`
	// Low and High are the smallest and largest n with E in range; LowDF
	// and HighDF their E, and the totals the units at each.
	Low, High     int        `json:"-"`
	LowDF, HighDF float64    `json:"-"`
	TotalLow      int        `json:"-"`
	TotalHigh     int        `json:"-"`
	Range         [2]int     `json:"n_range"`
	ErrorDF       [2]float64 `json:"error_df_range"`
	Totals        [2]int     `json:"total_range"`
	// Note explains a range that could not be met (the smallest design
	// already has E above 20).
	Note       string   `json:"note,omitempty"`
	GroupNames []string `json:"group_names"`
	Factors    []Factor `json:"factors"`
}

// Resource answers the request with Mead's resource equation instead of a
// power calculation: E = N − B − T, the error df left after the blocks
// (B = blocks − 1) and treatments (T = treatments − 1) are taken from the
// total (N = units − 1), should lie between about 10 and 20 (Mead 1988,
// The Design of Experiments: Statistical Principles for Practical
// Applications, Cambridge University Press, section 2.2; for animal work
// Festing and Altman 2002, "Guidelines for the design and statistical
// analysis of experiments using laboratory animals", ILAR Journal 43(4)
// 244–258; from memory). It is common practice and a fallback for when no
// effect size or SD can be given: below 10 the error variance is poorly
// estimated, above 20 further units improve that estimate little. It is
// not a ceiling on a design sized by power. The effect fields of r are
// ignored; the layout fields are used.
func Resource(r Request) (ResourceAnswer, error) {
	r.F, r.Eta2, r.D, r.Diff, r.Means, r.N, r.Detect = 0, 0, 0, 0, nil, 0, false
	r.Test = TestF
	if err := r.normalise(); err != nil {
		return ResourceAnswer{}, err
	}
	d, err := r.design()
	if err != nil {
		return ResourceAnswer{}, err
	}
	a := ResourceAnswer{Design: describeDesign(d), Cells: d.Cells(), Blocked: d.Blocked, NUnit: "units per group", GroupNames: groupNames(d), Factors: d.Factors}
	if d.Blocked {
		a.NUnit = "blocks"
	}
	edf := func(n int) (float64, int) {
		sizes := d.GroupSizes(n)
		total := 0
		for _, s := range sizes {
			total += s
		}
		if d.Blocked {
			return float64((d.Cells() - 1) * (n - 1)), total
		}
		return float64(total - d.Cells()), total
	}
	for n := 2; n <= MaxPerGroup; n++ {
		e, total := edf(n)
		if e > ResourceHigh {
			if a.Low == 0 {
				a.Low, a.High, a.LowDF, a.HighDF, a.TotalLow, a.TotalHigh = n, n, e, e, total, total
				a.Note = fmt.Sprintf("even the smallest design, n = %d, leaves %g error df, above %d: the resource equation sets no further limit here, and fewer units are not possible with %d groups", n, e, ResourceHigh, d.Cells())
			}
			break
		}
		if e >= ResourceLow {
			if a.Low == 0 {
				a.Low, a.LowDF, a.TotalLow = n, e, total
			}
			a.High, a.HighDF, a.TotalHigh = n, e, total
		}
	}
	a.Range, a.ErrorDF, a.Totals = [2]int{a.Low, a.High}, [2]float64{a.LowDF, a.HighDF}, [2]int{a.TotalLow, a.TotalHigh}
	return a, nil
}
