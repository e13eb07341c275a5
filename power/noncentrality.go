package power

import (
	"fmt"
	"math"
)

// Effect is the alternative an F test is planned for, in a form whose
// noncentrality can be computed for any group sizes. Exactly one of F,
// Means or Diff is used, in that order of precedence.
type Effect struct {
	// F is Cohen's f: λ = f²·N with N the total number of units (Cohen 1988,
	// eq. 8.3.1 in the noncentral form).
	F float64
	// Means are the expected cell means in plan order: the full factorial of
	// Design.Factors with the first factor varying slowest and the last
	// fastest (for factors A=2, B=2: A1B1, A1B2, A2B1, A2B2).
	Means []float64
	// Diff is the smallest difference between two means that matters,
	// planned for the least favourable configuration.
	Diff float64
	// SD is the SD between units (within blocks for complete blocks);
	// needed with Means and Diff.
	SD float64
}

func (e Effect) kind() string {
	switch {
	case e.F > 0 || (len(e.Means) == 0 && e.Diff == 0):
		return "f"
	case len(e.Means) > 0:
		return "means"
	}
	return "diff"
}

// Noncentrality returns λ of the tested term for the group sizes of each
// treatment cell (plan order):
//
//   - Cohen's f: λ = f²·N.
//   - Means of a one-way layout: λ = Σ nᵢ(μᵢ − μ̄)²/σ², μ̄ = Σ nᵢμᵢ/N, with
//     the sizes actually used (so non-integer allocation ratios are
//     weighted by ⌈n·rᵢ⌉, not by the ratios).
//   - Means of a factorial: λ = Σ nᵢ cᵢ²/σ² with cᵢ the tested term's own
//     component of the cell means (TermComponent): for a main effect its
//     marginal means about the grand mean, for an interaction the
//     inclusion–exclusion contrast (for two factors: cell − row mean −
//     column mean + grand mean). This is the noncentrality of the term's F
//     test in a balanced layout (Scheffé 1959, The Analysis of Variance,
//     sections 4.1 and 4.2; from memory), the same for complete blocks,
//     which are orthogonal to treatments.
//   - Diff D (one-way): the least favourable configuration puts the two
//     extreme means, D apart, in the pair with the smallest nₐn_b/(nₐ+n_b)
//     and every other mean at their weighted midpoint, so
//     λ = D²·min over pairs nₐn_b/(nₐ+n_b)/σ². Any other configuration
//     whose range is at least D has a larger λ: the between-group sum of
//     squares of all groups is at least that of the pair about its own
//     mean, which is D²·nₐn_b/(nₐ+n_b). For equal groups this is nD²/(2σ²),
//     Cohen's (1988, eq. 8.2.5, pattern 1) f = D/(σ√(2k)).
func (d Design) Noncentrality(e Effect, sizes []int) float64 {
	total := 0
	for _, s := range sizes {
		total += s
	}
	switch e.kind() {
	case "f":
		return e.F * e.F * float64(total)
	case "diff":
		return e.Diff * e.Diff * minPairHarmonic(sizes) / (e.SD * e.SD)
	}
	if len(d.Factors) == 1 {
		var mbar float64
		for i, m := range e.Means {
			mbar += float64(sizes[i]) * m
		}
		mbar /= float64(total)
		var ss float64
		for i, m := range e.Means {
			ss += float64(sizes[i]) * (m - mbar) * (m - mbar)
		}
		return ss / (e.SD * e.SD)
	}
	c := TermComponent(d.levelCounts(), d.termMask(), e.Means)
	var ss float64
	for i, v := range c {
		ss += float64(sizes[i]) * v * v
	}
	return ss / (e.SD * e.SD)
}

// minPairHarmonic returns min over pairs a ≠ b of nₐn_b/(nₐ+n_b). The
// function grows in both sizes, so the minimum is at the two smallest
// groups.
func minPairHarmonic(sizes []int) float64 {
	s1, s2 := math.Inf(1), math.Inf(1)
	for _, s := range sizes {
		v := float64(s)
		switch {
		case v < s1:
			s1, s2 = v, s1
		case v < s2:
			s2 = v
		}
	}
	return s1 * s2 / (s1 + s2)
}

func (d Design) levelCounts() []int {
	l := make([]int, len(d.Factors))
	for i, f := range d.Factors {
		l[i] = f.Levels
	}
	return l
}

// termMask returns the tested term's factors as a bit mask over Factors.
func (d Design) termMask() int {
	if len(d.Term) == 0 {
		return 1
	}
	m := 0
	for i, f := range d.Factors {
		for _, t := range d.Term {
			if t == f.Name {
				m |= 1 << i
			}
		}
	}
	return m
}

// TermComponent returns, for every cell of the full factorial with the
// given level counts (first factor slowest), the component of the cell
// means that belongs to the term whose factors are the bits of mask:
//
//	c_T = Σ_{S ⊆ T} (−1)^{|T∖S|} m_S
//
// where m_S is the mean over all factors outside S (m_∅ the grand mean).
// For one factor it is the marginal mean minus the grand mean; for two it is
// cell − row mean − column mean + grand mean. The components of all terms
// sum to the cell mean minus the grand mean and are orthogonal (Scheffé
// 1959, section 4.1). It panics if len(means) is not the number of cells.
func TermComponent(levels []int, mask int, means []float64) []float64 {
	cells := 1
	for _, l := range levels {
		cells *= l
	}
	if len(means) != cells {
		panic(fmt.Sprintf("power: TermComponent: %d means for %d cells", len(means), cells))
	}
	nf := len(levels)
	// digits of each cell, first factor slowest.
	digit := func(cell, f int) int {
		for g := nf - 1; g > f; g-- {
			cell /= levels[g]
		}
		return cell % levels[f]
	}
	out := make([]float64, cells)
	for sub := mask; ; sub = (sub - 1) & mask {
		// marginal means over the factors outside sub.
		key := func(cell int) int {
			k := 0
			for f := 0; f < nf; f++ {
				if sub&(1<<f) != 0 {
					k = k*levels[f] + digit(cell, f)
				}
			}
			return k
		}
		size := 1
		for f := 0; f < nf; f++ {
			if sub&(1<<f) != 0 {
				size *= levels[f]
			}
		}
		marg := make([]float64, size)
		for c, m := range means {
			marg[key(c)] += m
		}
		per := float64(cells / size)
		sign := 1.0
		if popcount(mask&^sub)%2 == 1 {
			sign = -1
		}
		for c := range out {
			out[c] += sign * marg[key(c)] / per
		}
		if sub == 0 {
			break
		}
	}
	return out
}

func popcount(x int) int {
	n := 0
	for ; x != 0; x &= x - 1 {
		n++
	}
	return n
}
