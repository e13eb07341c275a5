package power

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Test names the planned analysis.
type Test string

// Planned analyses.
const (
	TestF        Test = "anova"   // F test of a term
	TestT        Test = "t"       // two-sample t test
	TestControl  Test = "control" // each treatment against a control, Bonferroni
	TestDunnett  Test = "dunnett" // each treatment against a control, Dunnett
	TestAllPairs Test = "pairs"   // all pairs, Tukey's studentized range (as analysed)
	// TestPairsBonferroni is all pairs at the Bonferroni level alpha/m.
	TestPairsBonferroni Test = "pairs-bonferroni"
)

// MaxCells is the largest number of groups (treatment cells) a plan may
// have; beyond it the request is refused before any computation.
const MaxCells = 1000

// Directions of a one-sided test: the treatment (or group 2) is expected to
// be lower or higher than the control (or group 1).
const (
	DirectionLower  = "lower"
	DirectionHigher = "higher"
)

// Request is a planning question as a person states it: the layout, the
// test, the error rates, and the effect in whichever form is at hand. Zero
// values mean "not given".
type Request struct {
	Test    Test
	Groups  int      // one-way: number of groups
	Factors []Factor // factorial (overrides Groups)
	Term    []string
	Blocked bool
	Ratios  []float64 // unequal allocation (one-way); for t tests group 2 over group 1
	Control int       // 1-based control group for comparisons (default 1)
	// ControlName names the control level instead of Control (with Levels
	// or Factors[0].Names).
	ControlName string
	// Levels names the groups of a one-way layout (default "1".."k").
	Levels []string
	// Direction of a one-sided test: DirectionLower or DirectionHigher
	// (default higher); it implies Sides 1.
	Direction string
	Alpha     float64
	Power     float64
	Sides     int

	F, Eta2, D, Diff float64
	Means            []float64
	SD               float64
	PilotN           int
	PilotConf        float64
	BlockShare       float64

	Dropout float64
	// Covariate says the analysis adjusts for a baseline covariate
	// correlated CovariateR with the outcome (F tests only); a non-zero
	// CovariateR implies it.
	Covariate  bool
	CovariateR float64
	N          int  // evaluate power (or the detectable effect) at this n
	Detect     bool // report the smallest detectable effect at N
	// Explicit marks inputs given explicitly (by flag name: "alpha",
	// "power", "sides", "n", "pilot-conf"), so that a zero there is refused
	// rather than replaced by the default.
	Explicit map[string]bool
}

// FieldError is a problem with one input; Field is the name of the
// parameter (the flag name in allot size).
type FieldError struct {
	Field string
	Value string
	Msg   string
}

func (e *FieldError) Error() string {
	if e.Value != "" {
		return fmt.Sprintf("--%s %s: %s", e.Field, e.Value, e.Msg)
	}
	return fmt.Sprintf("--%s: %s", e.Field, e.Msg)
}

func ferr(field string, v any, format string, args ...any) error {
	val := ""
	switch x := v.(type) {
	case nil:
	case float64:
		val = strconv.FormatFloat(x, 'g', -1, 64)
	default:
		val = fmt.Sprint(x)
	}
	return &FieldError{Field: field, Value: val, Msg: fmt.Sprintf(format, args...)}
}

// Answer is the result of a request, with every assumption that produced
// it, ready to render.
type Answer struct {
	Method     string  `json:"method"`
	Design     string  `json:"design"`
	TestName   string  `json:"test"`
	Mode       string  `json:"mode"` // "sample size", "power", "detectable effect"
	Alpha      float64 `json:"alpha"`
	Sides      int     `json:"sides,omitempty"`
	Target     float64 `json:"target_power"`
	F          float64 `json:"f"`
	D          float64 `json:"d,omitempty"`
	EffectText string  `json:"effect"`
	SD         float64 `json:"sd,omitempty"`
	SDText     string  `json:"sd_basis,omitempty"`
	// N is units per group, or blocks for block designs (NUnit says which).
	N          int     `json:"n_per_group"`
	NUnit      string  `json:"n_unit"`
	GroupSizes []int   `json:"group_sizes"`
	Total      int     `json:"total_n"`
	Dropout    float64 `json:"dropout"`
	NDropout   int     `json:"n_with_dropout"`
	// GroupSizesDropout holds the units per treatment cell at NDropout.
	GroupSizesDropout []int   `json:"group_sizes_with_dropout"`
	TotalDropout      int     `json:"total_with_dropout"`
	DF1               float64 `json:"df1"`
	DF2               float64 `json:"df2"`
	Lambda            float64 `json:"noncentrality"`
	Crit              float64 `json:"critical_value"`
	CritName          string  `json:"critical_name"`
	Power             float64 `json:"achieved_power"`
	// Detectable is the smallest effect (f, or d for t tests and
	// comparisons) at the target power; DiffDetectable the same in response
	// units when an SD was given.
	Detectable     float64 `json:"detectable_effect,omitempty"`
	DiffDetectable float64 `json:"detectable_difference,omitempty"`
	ErrorDF        float64 `json:"error_df"`
	// Covariate marks a planned baseline covariate with correlation
	// CovariateR.
	Covariate  bool     `json:"covariate,omitempty"`
	CovariateR float64  `json:"covariate_r,omitempty"`
	Notes      []string `json:"notes,omitempty"`
	// Warnings name the risk of an extreme setting (alpha above 0.2,
	// attrition of half or more, target power of 0.995 or more).
	Warnings []string `json:"warnings,omitempty"`
	// EffectKind says how the effect was given: f, eta2, d, means, diff or
	// detect.
	EffectKind string    `json:"effect_kind"`
	Means      []float64 `json:"means,omitempty"`
	Diff       float64   `json:"diff,omitempty"`
	// GroupNames names the treatment cells in plan order (first factor
	// slowest); Factors holds the layout's factors with their level names.
	GroupNames []string `json:"group_names"`
	Factors    []Factor `json:"factors"`
	Blocked    bool     `json:"blocked"`
	// Control names the control level of comparisons with a control.
	Control   string `json:"control,omitempty"`
	Direction string `json:"direction,omitempty"`
	// Adjustment is the multiplicity method of planned comparisons:
	// bonferroni, dunnett or tukey.
	Adjustment string `json:"adjustment,omitempty"`
}

// normalise fills defaults and checks the request, returning a *FieldError
// naming the input. A zero marked Explicit is refused, not defaulted.
func (r *Request) normalise() error {
	for _, v := range []struct {
		name string
		zero bool
	}{{"alpha", r.Alpha == 0}, {"power", r.Power == 0}, {"sides", r.Sides == 0}, {"n", r.N == 0}, {"pilot-conf", r.PilotConf == 0}} {
		if v.zero && r.Explicit[v.name] {
			switch v.name {
			case "sides":
				return ferr("sides", 0, "must be 1 or 2")
			case "n":
				return ferr("n", 0, "must be at least 2 units per group (or blocks); leave --n out to solve for n")
			case "power":
				return ferr("power", 0.0, "must be above alpha and below 1 (for example 0.8)")
			}
			return ferr(v.name, 0.0, "must be between 0 and 1 (for example %s)", map[string]string{"alpha": "0.05", "pilot-conf": "0.8"}[v.name])
		}
	}
	if r.Alpha == 0 {
		r.Alpha = 0.05
	}
	if r.Power == 0 {
		r.Power = 0.80
	}
	if r.Test == "" {
		r.Test = TestF
	}
	switch r.Direction {
	case "":
	case DirectionLower, DirectionHigher:
		if r.Sides == 0 {
			r.Sides = 1
		}
		if r.Sides != 1 {
			return ferr("direction", r.Direction, "is for a one-sided test; drop --sides %d or --direction", r.Sides)
		}
	default:
		return ferr("direction", r.Direction, "must be lower or higher (the treatment expected below or above the control)")
	}
	if r.Sides == 0 {
		r.Sides = 2
	}
	if r.Sides == 1 && r.Direction == "" {
		r.Direction = DirectionHigher
	}
	if r.PilotConf == 0 {
		r.PilotConf = 0.8
	}
	if r.Control == 0 {
		r.Control = 1
	}
	if !(r.Alpha > 0 && r.Alpha < 1) {
		return ferr("alpha", r.Alpha, "must be between 0 and 1 (for example 0.05)")
	}
	if !(r.Power > r.Alpha && r.Power < 1) {
		return ferr("power", r.Power, "must be above alpha (%g) and below 1 (for example 0.8)", r.Alpha)
	}
	if r.Sides != 1 && r.Sides != 2 {
		return ferr("sides", r.Sides, "must be 1 or 2")
	}
	if r.Sides == 1 && r.Test == TestF {
		return ferr("sides", r.Sides, "an F test has no sides; one-sided tests are for two groups (--d) or planned comparisons (--compare)")
	}
	if r.Sides == 1 && (r.Test == TestAllPairs || r.Test == TestPairsBonferroni) {
		return ferr("sides", r.Sides, "comparisons of all pairs are two-sided; one-sided comparisons are with a control (--compare control or dunnett)")
	}
	if !(r.Dropout >= 0 && r.Dropout < 1) {
		return ferr("dropout", r.Dropout, "must be a fraction from 0 up to (not including) 1, for example 0.1 for 10%%")
	}
	if !(r.BlockShare >= 0 && r.BlockShare < 1) {
		return ferr("block-share", r.BlockShare, "must be a fraction from 0 up to (not including) 1")
	}
	if r.BlockShare > 0 && !r.Blocked {
		return ferr("block-share", r.BlockShare, "only applies to randomised complete blocks (--design rcbd)")
	}
	if r.N < 0 {
		return ferr("n", r.N, "must be a positive whole number")
	}
	if r.N == 1 {
		return ferr("n", r.N, "one unit per group leaves no error degrees of freedom; give at least 2")
	}
	if r.N > MaxPerGroup {
		return ferr("n", r.N, "above the limit of %d per group", MaxPerGroup)
	}
	if r.Detect && r.N == 0 {
		return ferr("detect", nil, "needs --n, the number of units per group (or blocks) to evaluate")
	}
	if r.Groups < 0 || r.Groups > MaxCells {
		return ferr("groups", r.Groups, "must be from 2 to %d", MaxCells)
	}
	for _, v := range []struct {
		name string
		x    float64
	}{{"f", r.F}, {"eta2", r.Eta2}, {"d", r.D}, {"diff", r.Diff}, {"sd", r.SD}} {
		if math.IsNaN(v.x) || math.IsInf(v.x, 0) {
			return ferr(v.name, v.x, "must be a finite number greater than 0")
		}
		if v.x < 0 {
			return ferr(v.name, v.x, "must be greater than 0")
		}
	}
	for _, m := range r.Means {
		if math.IsNaN(m) || math.IsInf(m, 0) {
			return ferr("means", joinFloats(r.Means), "every mean must be a finite number")
		}
	}
	if r.Eta2 >= 1 {
		return ferr("eta2", r.Eta2, "must be below 1")
	}
	return nil
}

// warnings names the risks of extreme settings.
func (r Request) warnings() []string {
	var w []string
	if r.Alpha > 0.2 {
		w = append(w, fmt.Sprintf("alpha %s is above 0.2: more than one study in five with no true effect would report one; a result at this level is weak evidence.", short(r.Alpha)))
	}
	if r.Dropout >= 0.5 {
		w = append(w, fmt.Sprintf("an attrition of %s%% means at least half the units are expected to be lost: losses that large are rarely at random, so the survivors may no longer be comparable between groups; reconsider the procedure or the endpoint before enrolling more units.", short(100*r.Dropout)))
	}
	if r.Power >= 0.995 {
		w = append(w, fmt.Sprintf("a target power of %s needs many more units than 0.8–0.9 for a small gain, and holds only if the effect and SD are exactly right; check that the extra units are justified.", short(r.Power)))
	}
	return w
}

func (r Request) effectsGiven() []string {
	var g []string
	if r.F > 0 {
		g = append(g, "--f")
	}
	if r.Eta2 > 0 {
		g = append(g, "--eta2")
	}
	if r.D > 0 {
		g = append(g, "--d")
	}
	if r.Diff > 0 {
		g = append(g, "--diff")
	}
	if len(r.Means) > 0 {
		g = append(g, "--means")
	}
	return g
}

// design builds the Design of the request.
func (r Request) design() (Design, error) {
	d := Design{Blocked: r.Blocked, Ratios: r.Ratios, Term: r.Term, Covariate: r.Covariate || r.CovariateR != 0, CovariateR: r.CovariateR}
	if !(r.CovariateR > -1 && r.CovariateR < 1) {
		return d, ferr("covariate-r", r.CovariateR, "the correlation must be strictly between -1 and 1 (for example 0.6)")
	}
	if d.Covariate && r.Test != TestF {
		return d, ferr("covariate-r", r.CovariateR, "a baseline covariate is planned for the F test; leave out --compare, --d and --sides 1 (two groups: the F test is the two-sided t test)")
	}
	switch {
	case len(r.Factors) > 0:
		d.Factors = r.Factors
		if r.Groups != 0 {
			return d, ferr("groups", r.Groups, "give either --groups or --factor, not both")
		}
		if len(r.Factors) == 1 && len(d.Term) == 1 && d.Term[0] == r.Factors[0].Name {
			d.Term = nil
		}
		if len(r.Levels) > 0 {
			return d, ferr("levels", strings.Join(r.Levels, ","), "names the groups of --groups; with --factor give the names there (NAME=a,b,c)")
		}
		cells := 1
		for _, f := range r.Factors {
			if f.Levels > MaxCells {
				return d, ferr("factor", f.Name, "%d levels: at most %d treatment cells are supported", f.Levels, MaxCells)
			}
			cells *= max(f.Levels, 1)
			if cells > MaxCells {
				return d, ferr("factor", f.Name, "the factorial has more than %d treatment cells, the limit", MaxCells)
			}
		}
	default:
		k := r.Groups
		if k == 0 {
			k = max(len(r.Means), len(r.Ratios))
			if k == 0 && (r.Test == TestT || r.D > 0) {
				k = 2
			}
		}
		if k == 0 {
			k = len(r.Levels)
		}
		if k < 2 {
			return d, ferr("groups", r.Groups, "need at least 2 groups (give --groups K, --means or --factor)")
		}
		if k > MaxCells {
			return d, ferr("groups", k, "at most %d groups are supported", MaxCells)
		}
		d.Factors = []Factor{{Name: "group", Levels: k}}
		if len(r.Levels) > 0 {
			if len(r.Levels) != k {
				return d, ferr("levels", strings.Join(r.Levels, ","), "%d names for %d groups: give one name per group", len(r.Levels), k)
			}
			d.Factors[0].Names = r.Levels
		}
		if len(r.Term) > 0 && !(len(r.Term) == 1 && r.Term[0] == "group") {
			return d, ferr("term", strings.Join(r.Term, ","), "a one-way layout has no factor %q; --term is for --factor layouts", r.Term[0])
		}
		d.Term = nil
	}
	if len(d.Factors) > 1 && len(d.Term) == 0 {
		return d, ferr("term", nil, "a factorial needs the effect to plan for: --term NAME for a main effect, --term NAME1,NAME2 for an interaction")
	}
	if err := d.Validate(); err != nil {
		field := "factor"
		switch {
		case strings.Contains(err.Error(), "term"):
			field = "term"
		case strings.Contains(err.Error(), "ratio") || strings.Contains(err.Error(), "allocation"):
			field = "ratios"
		}
		return d, &FieldError{Field: field, Msg: err.Error()}
	}
	if len(r.Means) > 0 && len(r.Means) != d.Cells() {
		if len(d.Factors) > 1 {
			return d, ferr("means", joinFloats(r.Means), "%d means for %d treatment cells: give one mean per cell, %s", len(r.Means), d.Cells(), CellOrder(d.Factors))
		}
		return d, ferr("means", joinFloats(r.Means), "%d means for %d groups: give one mean per group", len(r.Means), d.Cells())
	}
	return d, nil
}

// CellOrder describes the order of cell means for factors: the first
// factor varies slowest.
func CellOrder(fs []Factor) string {
	if len(fs) < 2 {
		return "in group order"
	}
	names := make([]string, len(fs))
	for i, f := range fs {
		names[i] = f.Name
	}
	ex := cellNames(fs)
	if len(ex) > 4 {
		ex = append(ex[:3], "…")
	}
	return fmt.Sprintf("in the order of the full factorial with %s varying slowest and %s fastest (%s)", names[0], names[len(names)-1], strings.Join(ex, ", "))
}

// cellOrderShort is CellOrder in a few words: "A slowest, B fastest".
func cellOrderShort(fs []Factor) string {
	return fs[0].Name + " slowest, " + fs[len(fs)-1].Name + " fastest"
}

// levelNames returns factor f's level names, "1".."k" when none were given.
func levelNames(f Factor) []string {
	if len(f.Names) == f.Levels {
		return f.Names
	}
	out := make([]string, f.Levels)
	for i := range out {
		out[i] = strconv.Itoa(i + 1)
	}
	return out
}

// cellNames returns the treatment cells' names in plan order, "a × b" for a
// factorial.
func cellNames(fs []Factor) []string {
	combos := []string{""}
	for i, f := range fs {
		var next []string
		names := levelNames(f)
		if len(fs) > 1 && len(f.Names) != f.Levels {
			for j := range names {
				names[j] = f.Name + names[j] // A1, A2 for unnamed levels
			}
		}
		for _, c := range combos {
			for _, l := range names {
				if i == 0 {
					next = append(next, l)
				} else {
					next = append(next, c+" × "+l)
				}
			}
		}
		combos = next
	}
	return combos
}

// groupNames returns the names of the groups as a person reads them:
// "group 1" for unnamed one-way groups, the level (or cell) names otherwise.
func groupNames(d Design) []string {
	names := cellNames(d.Factors)
	if len(d.Factors) == 1 && len(d.Factors[0].Names) == 0 {
		for i := range names {
			names[i] = "group " + names[i]
		}
	}
	return names
}

// sd resolves the SD to plan with and says where it comes from.
func (r Request) sd() (float64, string, []string, error) {
	if r.SD == 0 {
		if r.PilotN > 0 {
			return 0, "", nil, ferr("pilot-n", r.PilotN, "needs --sd, the SD the pilot gave")
		}
		if r.BlockShare > 0 {
			return 0, "", nil, ferr("block-share", r.BlockShare, "needs --sd, the total SD")
		}
		return 0, "", nil, nil
	}
	s := r.SD
	text := short(s)
	var notes []string
	if r.PilotN > 0 {
		if r.PilotN < 2 {
			return 0, "", nil, ferr("pilot-n", r.PilotN, "a pilot SD needs at least 2 units")
		}
		if !(r.PilotConf > 0 && r.PilotConf < 1) {
			return 0, "", nil, ferr("pilot-conf", r.PilotConf, "must be between 0 and 1 (for example 0.8)")
		}
		up, err := PilotSD(s, r.PilotN, r.PilotConf)
		if err != nil {
			return 0, "", nil, err
		}
		text = fmt.Sprintf("%s, the upper one-sided %s%% confidence limit of the pilot SD %s from %d units (Browne 1995)", trimSig(up, 4), short(100*r.PilotConf), short(s), r.PilotN)
		notes = append(notes, fmt.Sprintf("With the pilot SD %s itself the plan would rest on a small pilot that may have been quiet; the plan uses %s instead.", short(s), trimSig(up, 4)))
		s = up
	}
	if r.BlockShare > 0 {
		w := s * math.Sqrt(1-r.BlockShare)
		text = fmt.Sprintf("%s within blocks = total SD %s × sqrt(1 − %s), blocks taking %s%% of the variance", trimSig(w, 4), text, short(r.BlockShare), short(100*r.BlockShare))
		s = w
	} else if r.Blocked {
		text += " (the SD within a block)"
	}
	return s, text, notes, nil
}

// resolved is the effect of a request: Effect for F tests, a standardised
// difference d for t tests and comparisons.
type resolved struct {
	e    Effect
	d    float64
	kind string
	text string
}

// effect resolves the effect into an Effect (F tests) or a standardised
// difference d (t tests and comparisons).
func (r Request) effect(d Design, sd float64) (resolved, error) {
	given := r.effectsGiven()
	if r.Detect {
		if len(given) > 0 {
			return resolved{}, ferr("detect", nil, "asks for the effect; drop %s", strings.Join(given, " and "))
		}
		return resolved{kind: "detect", text: "the smallest detectable at the target power (solved for)"}, nil
	}
	if len(given) == 0 {
		return resolved{}, &FieldError{Field: "f", Msg: "give the effect to detect: --f, --eta2, --means with --sd, --diff with --sd, or --d for two groups"}
	}
	if len(given) > 1 {
		return resolved{}, &FieldError{Field: strings.TrimPrefix(given[1], "--"), Msg: "give only one effect size; also given: " + given[0]}
	}
	needSD := func(flag string) error {
		if sd == 0 {
			return &FieldError{Field: flag, Msg: "needs --sd, the SD of the response between units"}
		}
		return nil
	}
	standardised := r.Test != TestF
	switch {
	case r.F > 0:
		if standardised {
			return resolved{}, ferr("f", r.F, "is for F tests; for two groups or comparisons give --d, or --diff with --sd")
		}
		return resolved{e: Effect{F: r.F}, kind: "f", text: "Cohen's f = " + short(r.F)}, nil
	case r.Eta2 > 0:
		if standardised {
			return resolved{}, ferr("eta2", r.Eta2, "is for F tests; give --d, or --diff with --sd")
		}
		f, err := FFromEta2(r.Eta2)
		if err != nil {
			return resolved{}, ferr("eta2", r.Eta2, "%v", err)
		}
		return resolved{e: Effect{F: f}, kind: "eta2", text: fmt.Sprintf("η² = %s, Cohen's f = %s", short(r.Eta2), trimSig(f, 4))}, nil
	case r.D > 0:
		if !standardised {
			if d.Cells() != 2 {
				return resolved{}, ferr("d", r.D, "is for two groups; for %d groups give --f, --means or --diff", d.Cells())
			}
			f := r.D / 2
			return resolved{e: Effect{F: f}, kind: "d", text: fmt.Sprintf("d = %s (Cohen's f = d/2 = %s)", short(r.D), trimSig(f, 4))}, nil
		}
		return resolved{d: r.D, kind: "d", text: "d = " + short(r.D)}, nil
	case len(r.Means) > 0:
		if err := needSD("means"); err != nil {
			return resolved{}, err
		}
		if standardised {
			if r.Test != TestT {
				return resolved{}, ferr("means", joinFloats(r.Means), "planned comparisons take the smallest difference that matters: --diff with --sd")
			}
			dd := math.Abs(r.Means[1]-r.Means[0]) / sd
			if dd == 0 {
				return resolved{}, ferr("means", joinFloats(r.Means), "the means are equal: there is no effect to detect")
			}
			return resolved{d: dd, kind: "means", text: fmt.Sprintf("means %s with SD %s, d = %s", joinFloats(r.Means), trimSig(sd, 4), trimSig(dd, 4))}, nil
		}
		e := Effect{Means: r.Means, SD: sd}
		// The term's own component of the means must carry variation.
		if d.Noncentrality(e, d.GroupSizes(2)) == 0 {
			if len(d.Factors) > 1 {
				return resolved{}, ferr("means", joinFloats(r.Means), "these cell means have no %s component (%s): there is no effect of that term to detect", d.TermName(), CellOrder(d.Factors))
			}
			return resolved{}, ferr("means", joinFloats(r.Means), "all means are equal: there is no effect to detect")
		}
		text := fmt.Sprintf("means %s with SD %s", joinFloats(r.Means), trimSig(sd, 4))
		if len(d.Factors) > 1 {
			text = fmt.Sprintf("cell means %s (%s) with SD %s; planned for their %s component", joinFloats(r.Means), cellOrderShort(d.Factors), trimSig(sd, 4), d.TermName())
		}
		return resolved{e: e, kind: "means", text: text}, nil
	default: // Diff
		if err := needSD("diff"); err != nil {
			return resolved{}, err
		}
		if standardised {
			dd := r.Diff / sd
			return resolved{d: dd, kind: "diff", text: fmt.Sprintf("smallest difference that matters %s with SD %s, d = %s", short(r.Diff), trimSig(sd, 4), trimSig(dd, 4))}, nil
		}
		if len(d.Factors) > 1 {
			return resolved{}, ferr("diff", r.Diff, "is for one-way layouts; for a factorial term give --means (cell means), --f or --eta2")
		}
		return resolved{e: Effect{Diff: r.Diff, SD: sd}, kind: "diff", text: fmt.Sprintf("smallest difference between any two means %s with SD %s, least favourable configuration", short(r.Diff), trimSig(sd, 4))}, nil
	}
}

// Compute answers the request.
func Compute(r Request) (Answer, error) {
	if err := r.normalise(); err != nil {
		return Answer{}, err
	}
	d, err := r.design()
	if err != nil {
		return Answer{}, err
	}
	if err := r.resolveControl(d); err != nil {
		return Answer{}, err
	}
	sd, sdText, notes, err := r.sd()
	if err != nil {
		return Answer{}, err
	}
	eff, err := r.effect(d, sd)
	if err != nil {
		return Answer{}, err
	}
	a := Answer{Alpha: r.Alpha, Target: r.Power, SD: sd, SDText: sdText, EffectText: eff.text, Notes: notes, Dropout: r.Dropout,
		EffectKind: eff.kind, Means: r.Means, Diff: r.Diff, GroupNames: groupNames(d), Factors: d.Factors, Blocked: d.Blocked}
	if r.ControlName != "" {
		a.Control = r.ControlName
	}
	a.Mode = "sample size"
	switch {
	case r.Detect:
		a.Mode = "detectable effect"
	case r.N > 0:
		a.Mode = "power"
	}
	a.NUnit = "units per group"
	if r.Blocked {
		a.NUnit = "blocks"
	}
	a.Design = describeDesign(d)
	switch r.Test {
	case TestF:
		err = a.fTest(r, d, eff)
	case TestT:
		err = a.tTest(r, d, eff.d)
	case TestControl, TestAllPairs, TestDunnett, TestPairsBonferroni:
		err = a.comparisons(r, d, eff.d)
	default:
		return Answer{}, ferr("compare", string(r.Test), "must be control, dunnett, pairs or pairs-bonferroni")
	}
	if err != nil {
		return a, err
	}
	a.NDropout = int(math.Ceil(float64(a.N)/(1-r.Dropout) - 1e-9))
	if math.IsInf(a.Lambda, 0) || math.IsNaN(a.Lambda) {
		return a, &FieldError{Field: effectFlag(eff.kind), Value: effectValue(r, eff.kind), Msg: "the effect is so large against the SD that its noncentrality overflows; check the values and their units (any design detects such an effect)"}
	}
	a.GroupSizesDropout = sizesFor(d, r, a.NDropout)
	for _, s := range a.GroupSizesDropout {
		a.TotalDropout += s
	}
	a.Warnings = r.warnings()
	return a, nil
}

// resolveControl turns ControlName into the 1-based Control index.
func (r *Request) resolveControl(d Design) error {
	if r.ControlName == "" {
		if r.Control > d.Cells() {
			return ferr("control", r.Control, "there are only %d groups", d.Cells())
		}
		return nil
	}
	if len(d.Factors) != 1 {
		return ferr("control", r.ControlName, "a control level is for one-factor layouts")
	}
	names := levelNames(d.Factors[0])
	for i, n := range names {
		if n == r.ControlName {
			r.Control = i + 1
			return nil
		}
	}
	return ferr("control", r.ControlName, "is not one of the levels %s", strings.Join(names, ", "))
}

func sizesFor(d Design, r Request, n int) []int {
	if r.Test == TestT {
		return TwoGroups{Ratio: ratioT(r)}.sizes(n)
	}
	return d.GroupSizes(n)
}

func (a *Answer) fTest(r Request, d Design, eff resolved) error {
	a.Method = "exact noncentral F"
	a.TestName = "F test of " + d.TermName()
	if len(d.Term) > 1 {
		a.TestName = "F test of the " + d.TermName() + " interaction"
	}
	a.CritName = "critical F"
	var res Result
	switch {
	case r.Detect:
		var f float64
		f, res = d.Detectable(r.N, r.Alpha, r.Power)
		a.Detectable = f
		if a.SD > 0 && len(d.Factors) == 1 {
			// The least favourable configuration (see Noncentrality):
			// D = σ·sqrt(λ / min nₐn_b/(nₐ+n_b)).
			a.DiffDetectable = a.SD * math.Sqrt(res.Lambda/minPairHarmonic(res.GroupSizes))
		}
	case r.N > 0:
		res = d.EvaluateEffect(r.N, eff.e, r.Alpha)
	default:
		var err error
		res, err = d.SolveEffect(eff.e, r.Alpha, r.Power)
		if err != nil {
			return &FieldError{Field: effectFlag(eff.kind), Value: effectValue(r, eff.kind), Msg: "the effect is too small to reach the target power with at most " + strconv.Itoa(MaxPerGroup) + " units per group: " + err.Error()}
		}
	}
	a.N, a.GroupSizes, a.Total = res.N, res.GroupSizes, res.Total
	a.DF1, a.DF2, a.Lambda, a.Crit, a.Power = res.DF1, res.DF2, res.Lambda, res.FCrit, res.Power
	a.ErrorDF = res.DF2
	// Cohen's f of the answer: λ/N (for means and differences it follows
	// from the sizes used), without the covariate's gain.
	a.F = math.Sqrt(res.Lambda * (1 - d.CovariateR*d.CovariateR) / float64(res.Total))
	if d.Covariate {
		a.Covariate, a.CovariateR = true, d.CovariateR
		a.Notes = append(a.Notes, fmt.Sprintf("The analysis adjusts for a baseline covariate correlated r = %s with the outcome: the error variance is taken as %s of its value without it (1 − r²) and the covariate's slope uses one error df (Borm, Fransen and Lemmens 2007); measure the covariate before treatment.", trimSig(d.CovariateR, 3), trimSig(1-d.CovariateR*d.CovariateR, 3)))
	}
	switch eff.kind {
	case "means", "diff":
		a.EffectText += fmt.Sprintf(", Cohen's f = %s", trimSig(a.F, 4))
		if eff.kind == "means" && len(d.Factors) > 1 {
			a.Notes = append(a.Notes, fmt.Sprintf("Only the %s component of the cell means enters this test (for a main effect its marginal means; for an interaction cell − marginal means + grand mean): noncentrality %s at n = %d.", d.TermName(), trimSig(res.Lambda, 5), res.N))
		}
	}
	return nil
}

func effectValue(r Request, kind string) string {
	switch kind {
	case "means":
		return joinFloats(r.Means)
	case "diff":
		return short(r.Diff)
	case "d":
		return short(r.D)
	case "eta2":
		return short(r.Eta2)
	}
	return short(r.F)
}

func effectFlag(kind string) string {
	switch kind {
	case "means", "diff", "d", "eta2":
		return kind
	}
	return "f"
}

func ratioT(r Request) float64 {
	if len(r.Ratios) == 2 {
		return r.Ratios[1] / r.Ratios[0]
	}
	return 1
}

func (a *Answer) tTest(r Request, d Design, dd float64) error {
	if d.Cells() != 2 || len(d.Factors) != 1 {
		return ferr("groups", d.Cells(), "a t test compares exactly 2 groups")
	}
	if r.Blocked {
		return ferr("design", "rcbd", "the two-sample t test plans a completely randomised layout; for blocks use the F test (--f or --means)")
	}
	g := TwoGroups{Ratio: ratioT(r), Sides: r.Sides}
	a.Method = "exact noncentral t"
	a.TestName = "two-sample t test (pooled variance)"
	a.Sides = r.Sides
	if r.Sides == 1 {
		a.Direction = r.Direction
		a.TestName += fmt.Sprintf(", one-sided: %s expected %s than %s", a.GroupNames[1], r.Direction, a.GroupNames[0])
	}
	a.CritName = "critical t"
	eval := func(n int, d float64) tOutcome {
		r := g.Evaluate(n, d, r.Alpha)
		return tOutcome{r.N1, []int{r.N1, r.N2}, r.Total, r.DF, r.Delta, r.TCrit, r.Power}
	}
	if err := a.standardised(r, dd, eval, &FieldError{Field: "d", Value: short(dd), Msg: "the effect is too small to reach the target power"}); err != nil {
		return err
	}
	if g.Ratio != 1 {
		a.NUnit = "units in group 1"
	}
	return nil
}

func (a *Answer) comparisons(r Request, d Design, dd float64) error {
	c := Comparisons{Design: d, AllPair: r.Test == TestAllPairs || r.Test == TestPairsBonferroni, Control: r.Control - 1, Sides: r.Sides,
		Dunnett: r.Test == TestDunnett, Tukey: r.Test == TestAllPairs}
	if err := c.validate(); err != nil {
		return ferr("control", r.Control, "%v", err)
	}
	a.Method = "exact noncentral t, Bonferroni-adjusted"
	a.Adjustment = "bonferroni"
	switch {
	case c.Dunnett:
		a.Method, a.Adjustment = "exact noncentral t at Dunnett's critical value", "dunnett"
	case c.Tukey:
		a.Method, a.Adjustment = "exact noncentral t at Tukey's critical value q/√2", "tukey"
	}
	what := "each treatment against the control (" + a.GroupNames[r.Control-1] + ")"
	if !c.AllPair {
		a.Control = a.GroupNames[r.Control-1]
	}
	if c.AllPair {
		what = "all pairs of groups"
	}
	a.TestName = fmt.Sprintf("t comparisons of %s, %d comparisons at alpha/%d each", what, c.Count(), c.Count())
	switch {
	case c.Dunnett:
		a.TestName = fmt.Sprintf("Dunnett comparisons of %s, %d comparisons", what, c.Count())
	case c.Tukey:
		a.TestName = fmt.Sprintf("Tukey HSD comparisons of %s, %d comparisons", what, c.Count())
	}
	a.Sides = r.Sides
	if r.Sides == 1 {
		a.Direction = r.Direction
		a.TestName += ", one-sided: each treatment expected " + r.Direction + " than the control"
	}
	a.CritName = "critical t"
	eval := func(n int, d float64) tOutcome {
		r := c.Evaluate(n, d, r.Alpha)
		return tOutcome{r.N, r.GroupSizes, r.Total, r.DF, r.Delta, r.TCrit, r.Power}
	}
	if err := a.standardised(r, dd, eval, &FieldError{Field: "diff", Msg: "the difference is too small to reach the target power"}); err != nil {
		return err
	}
	switch {
	case c.Dunnett:
		a.Notes = append(a.Notes, "Power is that of the weakest single comparison at Dunnett's familywise critical value; the chance of detecting every true difference at once is lower.")
	case c.Tukey:
		a.Notes = append(a.Notes, "Power is that of the weakest single pair at Tukey's familywise critical value (the studentized range quantile over √2), as allot analyze tests all pairs by default; the chance of detecting every true difference at once is lower.")
	default:
		a.Notes = append(a.Notes, "Power is that of the weakest single comparison at level alpha/m (Bonferroni); the chance of detecting every true difference at once is lower.")
	}
	return nil
}

// tOutcome is a t-based test (two groups or planned comparisons) at one n.
type tOutcome struct {
	n         int
	sizes     []int
	total     int
	df, delta float64
	crit, pwr float64
}

// standardised fills the answer for a test of a standardised difference:
// the detectable difference at r.N, the power at r.N, or the n that reaches
// the target, with tooSmall (its message extended) when the search is capped.
func (a *Answer) standardised(r Request, dd float64, eval func(n int, d float64) tOutcome, tooSmall *FieldError) error {
	var o tOutcome
	switch {
	case r.Detect:
		a.Detectable = detectable(func(d float64) float64 { return eval(r.N, d).pwr }, r.Power)
		o, a.D = eval(r.N, a.Detectable), a.Detectable
		if a.SD > 0 {
			a.DiffDetectable = a.Detectable * a.SD
		}
	case r.N > 0:
		o, a.D = eval(r.N, dd), dd
	default:
		pw := func(n int) float64 { return eval(n, dd).pwr }
		m := 1.0
		if r.Test != TestT {
			m = float64(len(a.GroupNames) - 1)
			if r.Test == TestAllPairs || r.Test == TestPairsBonferroni {
				m = float64(len(a.GroupNames)*(len(a.GroupNames)-1)) / 2
			}
		}
		n := 2
		var err error
		if o2 := eval(2, dd); o2.pwr < r.Power {
			n, err = gallopN(2, tGuess(o2.delta, r.Alpha/m, r.Sides, r.Power), pw, r.Power)
		}
		a.D = dd
		if err != nil {
			tooSmall.Msg += ": " + err.Error()
			return tooSmall
		}
		o = eval(n, dd)
	}
	a.N, a.GroupSizes, a.Total = o.n, o.sizes, o.total
	a.DF1, a.DF2, a.Lambda, a.Crit, a.Power = 1, o.df, o.delta, o.crit, o.pwr
	a.ErrorDF = o.df
	return nil
}

func describeDesign(d Design) string {
	var fs []string
	for _, f := range d.Factors {
		fs = append(fs, fmt.Sprintf("%s (%d levels)", f.Name, f.Levels))
	}
	var s string
	switch {
	case len(d.Factors) == 1 && !d.Blocked:
		s = fmt.Sprintf("completely randomised, %d groups", d.Cells())
	case len(d.Factors) == 1:
		s = fmt.Sprintf("randomised complete blocks, %d treatments, one unit of each per block", d.Cells())
	case !d.Blocked:
		s = fmt.Sprintf("completely randomised full factorial %s, %d cells", strings.Join(fs, " × "), d.Cells())
	default:
		s = fmt.Sprintf("full factorial %s in randomised complete blocks, %d cells per block", strings.Join(fs, " × "), d.Cells())
	}
	if d.Ratios != nil {
		s += ", allocation " + joinFloatsSep(d.Ratios, ":")
	}
	return s
}

func short(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func trimSig(x float64, sig int) string { return strconv.FormatFloat(x, 'g', sig, 64) }

func joinFloats(v []float64) string { return joinFloatsSep(v, ", ") }

func joinFloatsSep(v []float64, sep string) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = short(x)
	}
	return strings.Join(s, sep)
}

// Series is a power curve: power against n for one effect.
type Series struct {
	Label string `json:"label"`
	// SDFactor is the SD multiplier of this curve (1 for the planned one).
	SDFactor float64   `json:"sd_factor"`
	Effect   float64   `json:"effect"`
	N        []int     `json:"n"`
	Power    []float64 `json:"power"`
}

// CurvePoints returns power against n (units per group, or blocks) for the
// answer's effect, for n from the smallest usable to about 2.5 times the
// answer's n, followed by one curve for each SD factor asked for (the same
// effect in response units with the SD multiplied by the factor, that is
// λ divided by its square), labelled with what it is ("SD 20% higher").
func CurvePoints(r Request, a Answer, sdFactors ...float64) ([]Series, error) {
	if err := r.normalise(); err != nil {
		return nil, err
	}
	d, err := r.design()
	if err != nil {
		return nil, err
	}
	if err := r.resolveControl(d); err != nil {
		return nil, err
	}
	sd, _, _, err := r.sd()
	if err != nil {
		return nil, err
	}
	eff, err := r.effect(d, sd)
	if err != nil {
		return nil, err
	}
	if r.Detect {
		eff.e, eff.d = Effect{F: a.Detectable}, a.Detectable
	}
	nmax := max(10, int(math.Ceil(2.5*float64(a.N))))
	step := max(1, nmax/200)
	powerAt := func(n int, k float64) float64 {
		switch r.Test {
		case TestT:
			return TwoGroups{Ratio: ratioT(r), Sides: r.Sides}.Evaluate(n, eff.d/k, r.Alpha).Power
		case TestControl, TestAllPairs, TestDunnett, TestPairsBonferroni:
			return Comparisons{Design: d, AllPair: r.Test == TestAllPairs || r.Test == TestPairsBonferroni, Control: r.Control - 1, Sides: r.Sides,
				Dunnett: r.Test == TestDunnett, Tukey: r.Test == TestAllPairs}.Evaluate(n, eff.d/k, r.Alpha).Power
		}
		e := eff.e
		if e.kind() == "f" {
			e.F /= k
		} else {
			e.SD *= k
		}
		return d.EvaluateEffect(n, e, r.Alpha).Power
	}
	label := func(k float64) string {
		if k == 1 {
			switch eff.kind {
			case "means":
				return fmt.Sprintf("means %s, SD %s (planned)", joinFloats(r.Means), trimSig(sd, 4))
			case "diff":
				return fmt.Sprintf("difference %s, SD %s (planned)", short(r.Diff), trimSig(sd, 4))
			case "detect":
				if a.DiffDetectable > 0 {
					return fmt.Sprintf("detectable difference %s, SD %s", trimSig(a.DiffDetectable, 4), trimSig(sd, 4))
				}
			}
			if r.Test == TestF {
				return fmt.Sprintf("Cohen's f = %s (planned)", trimSig(a.F, 3))
			}
			return fmt.Sprintf("d = %s (planned)", trimSig(a.D, 3))
		}
		pct := math.Round(100 * math.Abs(k-1))
		if k > 1 {
			return fmt.Sprintf("SD %g%% higher", pct)
		}
		return fmt.Sprintf("SD %g%% lower", pct)
	}
	var out []Series
	for _, k := range append([]float64{1}, sdFactors...) {
		s := Series{Label: label(k), SDFactor: k, Effect: a.F / k}
		if r.Test != TestF {
			s.Effect = a.D / k
		}
		for n := d.MinN(); n <= nmax; n += step {
			s.N = append(s.N, n)
			s.Power = append(s.Power, powerAt(n, k))
		}
		out = append(out, s)
	}
	return out, nil
}
