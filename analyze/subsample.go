package analyze

import (
	"fmt"
	"math"
	"math/big"

	"github.com/allotproject/allot/column"
)

// Sampling summarises the subsamples that were averaged to their units.
type Sampling struct {
	Units        int `json:"units"`
	Measurements int `json:"measurements"`
	MinPerUnit   int `json:"min_per_unit"`
	MaxPerUnit   int `json:"max_per_unit"`
	// Variance is the pooled variance between subsamples of one unit,
	// Σ_u Σ_k (y_uk − ȳ_u)² / Σ_u (n_u − 1), with DF its denominator.
	Variance float64 `json:"sampling_variance"`
	DF       int     `json:"sampling_df"`
}

// Average returns d with each observation's subsamples replaced by their
// exact mean (a rational in lowest terms, so no digit is lost before the
// fit), and the sampling summary. The experimental unit, the one that was
// randomised, is the unit of analysis; subsamples are not replicates. It
// returns d unchanged and nil when d has no subsamples.
func Average(d Data) (Data, *Sampling, error) {
	if d.Subsamples == nil {
		return d, nil, nil
	}
	out := d
	values := make([]string, len(d.Subsamples))
	out.Subsamples = nil
	s := &Sampling{Units: len(d.Subsamples), MinPerUnit: math.MaxInt}
	var ss float64
	for i, subs := range d.Subsamples {
		if len(subs) == 0 {
			return d, nil, fmt.Errorf("observation %d has no subsample values", i+1)
		}
		y, _, err := centred(column.Of(subs))
		if err != nil {
			return d, nil, fmt.Errorf("unit %d: %w", i+1, err)
		}
		var sum, r big.Rat
		for _, v := range subs {
			r.SetString(v)
			sum.Add(&sum, &r)
		}
		sum.Quo(&sum, new(big.Rat).SetInt64(int64(len(subs))))
		values[i] = sum.RatString()
		var m float64
		for _, v := range y {
			m += v
		}
		m /= float64(len(y))
		for _, v := range y {
			ss += (v - m) * (v - m)
		}
		s.Measurements += len(subs)
		s.DF += len(subs) - 1
		s.MinPerUnit = min(s.MinPerUnit, len(subs))
		s.MaxPerUnit = max(s.MaxPerUnit, len(subs))
	}
	s.Variance = math.NaN()
	if s.DF > 0 {
		s.Variance = ss / float64(s.DF)
	}
	out.Values = column.Of(values)
	return out, s, nil
}
