package sim

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/randomize"
)

// Question is a Monte-Carlo power question as a person states it: the
// planning request (layout, means, SD, alpha, target power, losses, n),
// and what the simulation adds to it.
type Question struct {
	Request power.Request
	// SDs gives one SD per treatment instead of Request.SD.
	SDs         []float64
	BlockSD     float64
	Subsamples  int
	SubsampleSD float64
	// PostHoc is "", "tukey" or "dunnett" (against Request's control, in
	// Request's sides and direction).
	PostHoc  string
	Sims     int
	Seed     uint64
	Workers  int
	Progress func(done int)
}

// Answer is the outcome of a Question.
type Answer struct {
	N      int    // units per group, or blocks
	Units  int    // units in the layout simulated
	NUnit  string // "units per group" or "blocks"
	Design string // in words
	Model  string // the data-generating model in words
	Term   string // the planned term
	// Analysis names the analysis applied to each data set.
	Analysis string
	// PostHocRule says how the comparisons were counted.
	PostHocRule string
	Target      float64 // target power when n was searched for, else 0
	Result      Result
	Tried       []Trial
	// Exact is the exact noncentral-F power of the planned term at N for
	// the same means without losses, subsamples or unequal SDs (0 when
	// that comparison does not apply).
	Exact float64
}

// ferr is a problem with one input of the question, by flag name.
func ferr(field, value, format string, args ...any) error {
	return &power.FieldError{Field: field, Value: value, Msg: fmt.Sprintf(format, args...)}
}

// finite reports whether v is a finite number.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Ask answers the question: validates it, builds the layout at each n,
// simulates, and (without Request.N) searches for the smallest n whose
// simulated power for the planned term reaches the target, starting from
// the exact answer scaled for the expected losses. Errors naming an input
// are *power.FieldError.
func Ask(ctx context.Context, q Question) (Answer, error) {
	r := q.Request
	if len(r.Means) == 0 {
		return Answer{}, ferr("simulate", "", "give the expected --means (one per group or treatment cell) and --sd or --sds")
	}
	if q.Sims < 1 {
		return Answer{}, ferr("sims", strconv.Itoa(q.Sims), "give at least 1")
	}
	sds := q.SDs
	if len(sds) == 0 {
		if !(r.SD > 0) {
			return Answer{}, ferr("simulate", "", "give --sd (or one SD per group with --sds)")
		}
		sds = []float64{r.SD}
	}
	for _, v := range sds {
		if !(v > 0) || !finite(v) {
			return Answer{}, ferr("sds", joinFloats(sds), "every SD must be greater than 0 and finite")
		}
	}
	if !finite(q.BlockSD) || q.BlockSD < 0 {
		return Answer{}, ferr("block-sd", short(q.BlockSD), "must be a finite number of at least 0")
	}
	if q.BlockSD > 0 && !r.Blocked {
		return Answer{}, ferr("block-sd", short(q.BlockSD), "block effects need --design rcbd")
	}
	if !finite(q.SubsampleSD) || q.SubsampleSD < 0 {
		return Answer{}, ferr("subsample-sd", short(q.SubsampleSD), "must be a finite number of at least 0")
	}
	if q.Subsamples < 0 {
		return Answer{}, ferr("subsamples", strconv.Itoa(q.Subsamples), "must be at least 1")
	}
	if q.PostHoc != "" && q.PostHoc != "tukey" && q.PostHoc != "dunnett" {
		return Answer{}, ferr("posthoc", q.PostHoc, "simulate tukey or dunnett")
	}
	for _, m := range r.Means {
		if !finite(m) {
			return Answer{}, ferr("means", joinFloats(r.Means), "every mean must be a finite number")
		}
	}
	if r.Alpha == 0 {
		r.Alpha = 0.05
	}
	if r.Power == 0 {
		r.Power = 0.8
	}
	// The layout's factors and level names.
	var names []string
	var levels [][]string
	if len(r.Factors) > 0 {
		for _, f := range r.Factors {
			names = append(names, f.Name)
			l := f.Names
			if len(l) != f.Levels {
				l = Levels(f.Levels)
			}
			levels = append(levels, l)
		}
	} else {
		k := r.Groups
		if k == 0 {
			k = len(r.Means)
		}
		if k > power.MaxCells {
			return Answer{}, ferr("groups", strconv.Itoa(k), "at most %d groups are supported", power.MaxCells)
		}
		l := r.Levels
		if len(l) != k {
			l = Levels(k)
		}
		names, levels = []string{"group"}, [][]string{l}
	}
	cells := 1
	for _, l := range levels {
		cells *= len(l)
	}
	if len(r.Means) != cells {
		return Answer{}, ferr("means", joinFloats(r.Means), "%d means for %d treatments: give one mean per treatment, %s", len(r.Means), cells, power.CellOrder(r.Factors))
	}
	if len(sds) != 1 && len(sds) != cells {
		return Answer{}, ferr("sds", joinFloats(sds), "%d SDs for %d treatments: give one SD, or one per treatment", len(sds), cells)
	}
	termName := names[0]
	if len(r.Term) > 0 {
		var ordered []string
		for _, n := range names {
			for _, t := range r.Term {
				if t == n {
					ordered = append(ordered, n)
				}
			}
		}
		termName = strings.Join(ordered, " × ")
	}
	control := 0
	if r.ControlName != "" {
		control = -1
		for i, l := range levels[0] {
			if l == r.ControlName {
				control = i
			}
		}
		if control < 0 || len(levels) != 1 {
			return Answer{}, ferr("control", r.ControlName, "is not a level of the one factor (levels %s)", strings.Join(levels[0], ", "))
		}
	} else if r.Control > 0 {
		control = r.Control - 1
	}
	sides := r.Sides
	if sides == 0 {
		sides = 2
		if r.Direction != "" {
			sides = 1
		}
	}
	if q.PostHoc == "tukey" && sides == 1 {
		return Answer{}, ferr("sides", "1", "Tukey's comparisons of all pairs are two-sided; one-sided comparisons are with a control (--posthoc dunnett)")
	}
	planAt := func(n int) (design.Plan, error) { return PlanFor(names, levels, r.Blocked, n, r.Ratios) }
	spec := Spec{Means: r.Means, SDs: sds, BlockSD: q.BlockSD, Dropout: r.Dropout, Subsamples: q.Subsamples, SubsampleSD: q.SubsampleSD,
		Alpha: r.Alpha, SSType: 3, PostHoc: q.PostHoc, Control: control, Sides: sides, Direction: r.Direction,
		Sims: q.Sims, Seed: q.Seed, Workers: q.Workers, Progress: q.Progress}
	// The exact answer without losses, where the formula applies.
	exactReq := r
	exactReq.Dropout, exactReq.N, exactReq.Detect, exactReq.Test = 0, 0, false, power.TestF
	exactReq.Sides, exactReq.Direction = 0, ""
	exactReq.Explicit = nil
	exact, exactErr := power.Compute(exactReq)
	a := Answer{Term: termName, Target: r.Power}
	var res Result
	var n int
	if r.N > 0 {
		n = r.N
		p, err := planAt(n)
		if err != nil {
			return a, err
		}
		l, err := randomize.Assign(p)
		if err != nil {
			return a, err
		}
		spec.Layout = l
		if res, err = Run(ctx, spec); err != nil {
			return a, err
		}
		a.Target = 0
	} else {
		start := 2
		if exactErr == nil {
			start = int(math.Ceil(float64(exact.N) / (1 - r.Dropout)))
		}
		sol, err := Solve(ctx, spec, planAt, termName, r.Power, start, 4*start+50)
		if err != nil {
			return a, err
		}
		n, res, a.Tried = sol.N, sol.Result, sol.Tried
	}
	if exactErr == nil && r.Dropout == 0 && len(sds) == 1 && q.Subsamples <= 1 && q.SubsampleSD == 0 {
		req := exactReq
		req.N = n
		if e, err := power.Compute(req); err == nil {
			a.Exact = e.Power
		}
	}
	p, err := planAt(n)
	if err != nil {
		return a, err
	}
	a.N, a.Units, a.Result = n, p.NumUnits(), res
	a.NUnit = "units per group"
	a.Design = fmt.Sprintf("completely randomised, %d treatments", len(p.Treatments()))
	if r.Blocked {
		a.NUnit = "blocks"
		a.Design = fmt.Sprintf("randomised complete blocks, %d treatments", len(p.Treatments()))
	}
	a.Model = fmt.Sprintf("means %s, SD %s", joinFloatsSep(r.Means, ","), joinFloats(sds))
	if q.BlockSD > 0 {
		a.Model += fmt.Sprintf(", block SD %g", q.BlockSD)
	}
	if r.Dropout > 0 {
		a.Model += fmt.Sprintf(", each unit lost with probability %g", r.Dropout)
	}
	if q.Subsamples > 1 {
		a.Model += fmt.Sprintf(", %d subsamples per unit with SD %g", q.Subsamples, q.SubsampleSD)
	}
	a.Analysis = "ANOVA F tests (Type III) at alpha " + short(r.Alpha)
	if q.PostHoc != "" {
		a.Analysis += " with " + q.PostHoc + " comparisons"
		a.PostHocRule = "The comparisons are counted in every data set whatever the F test says, as allot analyze runs requested comparisons regardless of the F test."
		if q.PostHoc == "dunnett" {
			a.PostHocRule += fmt.Sprintf(" Dunnett: each treatment against %s, ", levels[0][control])
			if sides == 1 {
				a.PostHocRule += "one-sided (treatment expected " + orHigher(r.Direction) + ")."
			} else {
				a.PostHocRule += "two-sided."
			}
		}
	}
	return a, nil
}

func orHigher(d string) string {
	if d == "" {
		return power.DirectionHigher
	}
	return d
}

func short(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func joinFloats(v []float64) string { return joinFloatsSep(v, ", ") }

func joinFloatsSep(v []float64, sep string) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = short(x)
	}
	return strings.Join(s, sep)
}
