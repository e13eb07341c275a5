package options

import (
	"strconv"
	"strings"

	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
)

// Size holds the text inputs of allot size that need parsing beyond a
// number; everything numeric is already in Req.
type Size struct {
	Req     power.Request
	Factors []string // --factor NAME=LEVELS, repeatable
	Term    string   // --term NAME or NAME1,NAME2
	Design  string   // --design crd|rcbd
	Blocks  int      // --blocks B
	// BlocksSet and NSet say whether --blocks and --n were given.
	BlocksSet, NSet bool
	Means           string // --means M1,M2,...
	Ratios          string // --ratios R1,R2,...
	Compare         string // --compare control|dunnett|pairs
}

// Request resolves s into the planning request and the level names of each
// factor (for the simulation). Errors are *Error naming the flag.
func (s Size) Request() (power.Request, [][]string, error) {
	r := s.Req
	var levelNames [][]string
	switch s.Design {
	case "crd":
	case "rcbd":
		r.Blocked = true
	default:
		return r, nil, errorf("design", "--design %s: must be crd (completely randomised) or rcbd (randomised complete blocks)", s.Design)
	}
	if s.BlocksSet {
		if s.Blocks < 2 {
			return r, nil, errorf("blocks", "--blocks %d: a block design needs at least 2 blocks", s.Blocks)
		}
		if s.NSet {
			return r, nil, errorf("blocks", "--blocks %d: give either --blocks or --n, not both", s.Blocks)
		}
		r.Blocked, r.N = true, s.Blocks
	}
	for _, spec := range s.Factors {
		name, levels, ok := strings.Cut(spec, "=")
		name = strings.TrimSpace(name)
		if !ok || name == "" || levels == "" {
			return r, nil, errorf("factor", "--factor %s: write NAME=LEVELS, for example dose=3 or diet=chow,fat", spec)
		}
		k, err := strconv.Atoi(levels)
		names := sim.Levels(max(k, 0))
		if err != nil {
			list := strings.Split(levels, ",")
			seen := map[string]bool{}
			names = nil
			for _, l := range list {
				l = strings.TrimSpace(l)
				if l == "" || seen[l] {
					return r, nil, errorf("factor", "--factor %s: level names must be non-empty and distinct", spec)
				}
				seen[l] = true
				names = append(names, l)
			}
			k = len(list)
		}
		levelNames = append(levelNames, names)
		if k < 2 {
			return r, nil, errorf("factor", "--factor %s: factor %q needs at least 2 levels", spec, name)
		}
		r.Factors = append(r.Factors, power.Factor{Name: name, Levels: k})
	}
	if s.Term != "" {
		for _, t := range strings.Split(s.Term, ",") {
			r.Term = append(r.Term, strings.TrimSpace(t))
		}
	}
	var err error
	if r.Means, err = FloatList("means", s.Means); err != nil {
		return r, nil, err
	}
	if r.Ratios, err = FloatList("ratios", s.Ratios); err != nil {
		return r, nil, err
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
	case "dunnett":
		r.Test = power.TestDunnett
	default:
		return r, nil, errorf("compare", "--compare %s: must be control, dunnett or pairs", s.Compare)
	}
	return r, levelNames, nil
}
