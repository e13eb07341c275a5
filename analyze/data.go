package analyze

import (
	"fmt"
	"math/big"
	"sort"
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
	// Values holds each observation as decimal text ("12.40", "1e3").
	Values  []string
	Factors []Column
	// Block is the blocking column, or nil.
	Block *Column
	// BlockInteraction adds the block × treatment interaction to the model:
	// a generalised randomised block design, with each treatment more than
	// once in every block, estimates it from the replicates within blocks.
	BlockInteraction bool
	// Units and Where identify each observation (unit ID; for example
	// `Entry!F7`), for listing unusual residuals. Either may be nil.
	Units, Where []string
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

// centred parses the decimal texts, subtracts the median observation exactly
// and returns the centred float64 values with the shift.
func centred(values []string) ([]float64, *big.Rat, error) {
	rats := make([]*big.Rat, len(values))
	for i, s := range values {
		r, ok := new(big.Rat).SetString(s)
		if !ok {
			return nil, nil, fmt.Errorf("observation %d: %q is not a decimal number", i+1, s)
		}
		rats[i] = r
	}
	if len(rats) == 0 {
		return nil, nil, fmt.Errorf("no observations")
	}
	order := make([]int, len(rats))
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return rats[order[a]].Cmp(rats[order[b]]) < 0 })
	shift := new(big.Rat).Set(rats[order[len(order)/2]])
	out := make([]float64, len(rats))
	var d big.Rat
	for i, r := range rats {
		d.Sub(r, shift)
		out[i], _ = d.Float64()
	}
	return out, shift, nil
}

// ratMean returns the exact mean of the decimal texts, rounded to float64.
func ratMean(values []string, idx []int) float64 {
	var sum, r big.Rat
	for _, i := range idx {
		r.SetString(values[i])
		sum.Add(&sum, &r)
	}
	sum.Quo(&sum, new(big.Rat).SetInt64(int64(len(idx))))
	f, _ := sum.Float64()
	return f
}
