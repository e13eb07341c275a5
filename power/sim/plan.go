package sim

import (
	"context"
	"fmt"
	"math"
	"strconv"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
)

// PlanFor returns the plan of a balanced layout with n units per treatment
// (completely randomised; ratios scale n per treatment) or n blocks
// (randomised complete blocks, one unit of each treatment per block).
// levels names each factor's levels.
func PlanFor(names []string, levels [][]string, blocked bool, n int, ratios []float64) (design.Plan, error) {
	p := design.Plan{Title: "simulated power", Design: design.CRD, Blocks: 1, BlockName: "block", Seed: 1, Generator: randomize.Generator}
	for i, name := range names {
		p.Factors = append(p.Factors, design.Factor{Name: name, Levels: levels[i]})
	}
	nt := len(p.Treatments())
	p.Reps = make([]int, nt)
	for t := range p.Reps {
		p.Reps[t] = n
		if ratios != nil {
			p.Reps[t] = int(math.Ceil(float64(n)*ratios[t] - 1e-9))
		}
	}
	if blocked {
		p.Design, p.Blocks = design.RCBD, n
		for t := range p.Reps {
			p.Reps[t] = 1
		}
	}
	return p, p.Validate()
}

// Levels returns "1".."k", the level names of a factor given by its count.
func Levels(k int) []string {
	out := make([]string, k)
	for i := range out {
		out[i] = strconv.Itoa(i + 1)
	}
	return out
}

// SolveResult is the simulated sample size.
type SolveResult struct {
	N      int     // units per group, or blocks
	Result Result  // the simulation at N
	Tried  []Trial // every n simulated, in order
}

// Trial is one n that was simulated.
type Trial struct {
	N     int     `json:"n"`
	Power float64 `json:"power"`
	SE    float64 `json:"mc_se"`
}

// Solve finds the smallest n whose simulated power for term reaches target,
// starting from start (the exact answer without losses, where one exists,
// scaled for the expected losses): it steps up from start until the target
// is reached, or down while n − 1 still reaches it. Each step is a full
// simulation with the same seed (common random numbers), so neighbouring n
// are compared on the same random draws. Monte-Carlo error makes the answer
// uncertain by about one unit near the boundary; the trials are returned so
// that this can be seen.
func Solve(ctx context.Context, s Spec, plan func(n int) (design.Plan, error), term string, target float64, start, maxN int) (SolveResult, error) {
	eval := func(n int) (Result, Estimate, error) {
		p, err := plan(n)
		if err != nil {
			return Result{}, Estimate{}, err
		}
		l, err := randomize.Assign(p)
		if err != nil {
			return Result{}, Estimate{}, err
		}
		s.Layout = l
		r, err := Run(ctx, s)
		if err != nil {
			return r, Estimate{}, err
		}
		for _, t := range r.Terms {
			if t.Name == term {
				return r, t, nil
			}
		}
		return r, Estimate{}, fmt.Errorf("no term %q in the model", term)
	}
	var out SolveResult
	n := max(start, 2)
	r, e, err := eval(n)
	if err != nil {
		return out, err
	}
	out.Tried = append(out.Tried, Trial{n, e.P, e.SE})
	if e.P < target {
		for e.P < target {
			if n >= maxN || r.Cancelled {
				return out, fmt.Errorf("the target power is not reached by simulation with up to %d per group (power %.3f at %d)", maxN, e.P, n)
			}
			n++
			if r, e, err = eval(n); err != nil {
				return out, err
			}
			out.Tried = append(out.Tried, Trial{n, e.P, e.SE})
		}
		out.N, out.Result = n, r
		return out, nil
	}
	best, bestR := n, r
	for n > 2 && !r.Cancelled {
		r2, e2, err := eval(n - 1)
		if err != nil {
			return out, err
		}
		out.Tried = append(out.Tried, Trial{n - 1, e2.P, e2.SE})
		if e2.P < target {
			break
		}
		n--
		best, bestR, r = n, r2, r2
	}
	out.N, out.Result = best, bestR
	return out, nil
}
