package options

import (
	"errors"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/report"
)

// Size holds the inputs of allot size (exact calculation and resource
// equation) as typed: the numbers already in Req, the rest as the text of
// the flag or form field of the same name. The command and the size page
// of allot serve both resolve it with Request, so that both accept, refuse
// and answer alike.
type Size struct {
	Req     power.Request
	Study   report.Study // --response, --unit, --sd-source, --subjects, --block-name, --effect-reason
	Factors []string     // --factor NAME=LEVELS, repeatable
	Term    string       // --term NAME or NAME1,NAME2
	Design  string       // --design crd|rcbd
	Blocks  int          // --blocks B
	Means   string       // --means M1,M2,...
	Ratios  string       // --ratios R1,R2,...
	Levels  string       // --levels A,B,C (group names of a one-way layout)
	Compare string       // --compare control|dunnett|pairs|pairs-bonferroni
	// Given names the flags given explicitly (cobra's Changed, a filled
	// form field): an explicit zero is refused rather than defaulted, and
	// --blocks, --n and --sides interact with what else was given.
	Given map[string]bool
}

// Request resolves s into the planning request and the study it is about
// (with the block called "block" when the design has blocks and no
// --block-name was given). Errors are *Error naming the flag, with the
// message allot size prints.
func (s Size) Request() (power.Request, report.Study, error) {
	r, st := s.Req, s.Study
	r.Explicit = map[string]bool{}
	for _, name := range []string{"alpha", "power", "sides", "n", "pilot-conf"} { // an explicit zero is refused
		r.Explicit[name] = s.Given[name]
	}
	r.Covariate = s.Given["covariate-r"]
	if s.Given["groups"] && r.Groups > power.MaxCells {
		return r, st, errorf("groups", "--groups %d: at most %d groups are supported", r.Groups, power.MaxCells)
	}
	if st.Subjects == "" {
		st.Subjects = "units"
	}
	switch st.Subjects {
	case "animals", "plants", "units":
	default:
		return r, st, errorf("subjects", "--subjects %s: must be animals, plants or units", st.Subjects)
	}
	if s.Levels != "" {
		r.Levels = nil
		for _, l := range strings.Split(s.Levels, ",") {
			r.Levels = append(r.Levels, strings.TrimSpace(l))
		}
	}
	switch s.Design {
	case "crd":
	case "rcbd":
		r.Blocked = true
	default:
		return r, st, errorf("design", "--design %s: must be crd (completely randomised), rcbd (randomised complete blocks), split-plot or latin", s.Design)
	}
	if s.Given["blocks"] {
		if s.Blocks < 2 {
			return r, st, errorf("blocks", "--blocks %d: a block design needs at least 2 blocks", s.Blocks)
		}
		if s.Given["n"] {
			return r, st, errorf("blocks", "--blocks %d: give either --blocks or --n, not both", s.Blocks)
		}
		r.Blocked, r.N = true, s.Blocks
	}
	r.Factors = nil
	for _, spec := range s.Factors {
		f, err := parseFactor(spec)
		if err != nil {
			return r, st, err
		}
		r.Factors = append(r.Factors, f)
	}
	if s.Term != "" {
		r.Term = nil
		for _, t := range strings.Split(s.Term, ",") {
			r.Term = append(r.Term, strings.TrimSpace(t))
		}
	}
	var err error
	if r.Means, err = FloatList("means", s.Means); err != nil {
		return r, st, err
	}
	if r.Ratios, err = FloatList("ratios", s.Ratios); err != nil {
		return r, st, err
	}
	switch s.Compare {
	case "":
		r.Test = power.TestF
		if r.D > 0 || r.Sides == 1 {
			r.Test = power.TestT
		}
	case "control":
		r.Test = power.TestControl
	case "pairs":
		r.Test = power.TestAllPairs
	case "pairs-bonferroni":
		r.Test = power.TestPairsBonferroni
	case "dunnett":
		r.Test = power.TestDunnett
	default:
		return r, st, errorf("compare", "--compare %s: must be control, dunnett, pairs (Tukey) or pairs-bonferroni", s.Compare)
	}
	if r.Direction != "" && !s.Given["sides"] {
		r.Sides = 0 // --direction implies one side
	}
	if s.Compare == "" && r.Direction != "" {
		r.Test = power.TestT
	}
	if st.BlockName == "" && r.Blocked {
		st.BlockName = "block"
	}
	return r, st, nil
}

// parseFactor reads --factor NAME=LEVELS, LEVELS a count or a comma list
// of distinct names, with the one factor grammar of design
// (design.ParseFactorOrCount); a count leaves the names to the plan.
func parseFactor(spec string) (power.Factor, error) {
	f, err := design.ParseFactorOrCount(spec)
	if err != nil {
		var de *design.Error
		if errors.As(err, &de) {
			return power.Factor{}, errorf("factor", "--factor %s", de.Msg)
		}
		return power.Factor{}, err
	}
	if len(f.Levels) > power.MaxCells {
		return power.Factor{}, errorf("factor", "--factor %s: at most %d levels are supported", spec, power.MaxCells)
	}
	var names []string
	if _, levels, _ := strings.Cut(spec, "="); !isCount(levels) {
		names = f.Levels
	}
	return power.Factor{Name: f.Name, Levels: len(f.Levels), Names: names}, nil
}

// isCount reports whether a --factor's levels are given as a count (dose=3).
func isCount(levels string) bool {
	_, err := strconv.Atoi(strings.TrimSpace(levels))
	return err == nil
}
