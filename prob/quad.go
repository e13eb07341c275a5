package prob

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// gaussRule holds the nodes and weights of an n-point Gauss–Legendre rule on
// [−1, 1], computed by gonum's quad.Legendre.
type gaussRule struct {
	x, w []float64
}

func newGaussRule(n int) gaussRule {
	r := gaussRule{x: make([]float64, n), w: make([]float64, n)}
	quad.Legendre{}.FixedLocations(r.x, r.w, -1, 1)
	return r
}

// adaptive integrates f over [lo, hi] to an absolute tolerance tol by
// recursive bisection: a panel is accepted when the rule on the whole panel
// and the sum of the rule on its two halves agree within the panel's share of
// tol (the halves' sum is returned), otherwise both halves are refined with
// half the tolerance each, at most maxDepth times.
func (r gaussRule) adaptive(f func(float64) float64, lo, hi, tol float64, maxDepth int) float64 {
	return r.refine(f, lo, hi, r.panel(f, lo, hi), tol, maxDepth)
}

func (r gaussRule) panel(f func(float64) float64, lo, hi float64) float64 {
	mid, half := (lo+hi)/2, (hi-lo)/2
	var s float64
	for i, x := range r.x {
		s += r.w[i] * f(mid+x*half)
	}
	return s * half
}

func (r gaussRule) refine(f func(float64) float64, lo, hi, whole, tol float64, depth int) float64 {
	mid := (lo + hi) / 2
	left, right := r.panel(f, lo, mid), r.panel(f, mid, hi)
	if depth <= 0 || math.Abs(left+right-whole) <= tol {
		return left + right
	}
	return r.refine(f, lo, mid, left, tol/2, depth-1) + r.refine(f, mid, hi, right, tol/2, depth-1)
}
