// Package design defines the plan of a comparative experiment: treatment
// factors and their levels, the treatments (the full factorial of the
// levels), replication, blocks, responses to record, and the experimental
// units with their positions. A Layout is a Plan with a treatment assigned
// to every unit (package randomize makes one).
//
// A plan has one canonical JSON form (encoding/json of Plan, fields in
// declaration order, no insignificant white space) and a fingerprint, the
// lower-case hexadecimal SHA-256 of that form, so a plan embedded in a
// workbook or a report can be checked for edits.
package design

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"strconv"
	"strings"
)

// Kind is the design's trade name.
type Kind string

// The designs allot lays out.
const (
	// CRD is the completely randomised design: treatments assigned to all
	// units at random, no blocking.
	CRD Kind = "crd"
	// RCBD is the randomised complete block design: every block holds each
	// treatment Reps times, randomised separately within each block.
	RCBD Kind = "rcbd"
)

// MaxUnits is the most units a plan may have: one worksheet row each below
// the header (1,048,576 rows in an .xlsx sheet).
const MaxUnits = 1_048_575

// Factor is a treatment factor with its levels, in the order given.
type Factor struct {
	Name   string   `json:"name"`
	Levels []string `json:"levels"`
}

// Response is a measured outcome, with an optional plausible range that the
// workbook enforces on entry and the check reports.
type Response struct {
	Name string   `json:"name"`
	Min  *float64 `json:"min,omitempty"`
	Max  *float64 `json:"max,omitempty"`
}

// Plan is everything needed to lay out, record and analyse the experiment.
type Plan struct {
	Title   string   `json:"title"`
	Design  Kind     `json:"design"`
	Factors []Factor `json:"factors"`
	// Control is the level (one-factor plans) that the others are compared
	// with, or empty.
	Control string `json:"control,omitempty"`
	// Reps holds the replication of each treatment, in Treatments order:
	// units in total for CRD, units per block for RCBD.
	Reps []int `json:"reps"`
	// Blocks is the number of blocks (1 for CRD).
	Blocks int `json:"blocks"`
	// BlockName is what a block is called here: bench, litter, day, rack.
	BlockName string     `json:"block_name"`
	Responses []Response `json:"responses"`
	// Seed and Generator identify the randomisation (see package randomize).
	Seed      uint64 `json:"seed"`
	Generator string `json:"generator"`
	// Units is the given list of experimental units (animal IDs with their
	// litters, say), or nil for units numbered by the default scheme. With
	// a list, the blocks and their sizes come from it.
	Units []UnitSpec `json:"units,omitempty"`
	// Grid places each block's positions on a rows × columns grid.
	Grid *Grid `json:"grid,omitempty"`
	// Blind replaces treatment names by codes on everything the people
	// scoring outcomes see; the key is kept apart.
	Blind bool `json:"blind,omitempty"`
	// Order adds a randomised measurement order within each block.
	Order bool `json:"order,omitempty"`
	// Subsamples is the number of measurements taken on each unit (leaves
	// on a plant, pups in a litter-housed cage): 0 or 1 for one. They are
	// recorded on their own rows and averaged to the unit for analysis.
	Subsamples int `json:"subsamples,omitempty"`
}

// UnitSpec is one unit of a given unit list.
type UnitSpec struct {
	ID    string `json:"id"`
	Block int    `json:"block"` // 1-based
	// BlockLabel is the block's name in the list (a litter ID), if any.
	BlockLabel string   `json:"block_label,omitempty"`
	Covariate  *float64 `json:"covariate,omitempty"`
}

// Grid is the physical arrangement of a block's positions: Rows × Cols
// places, numbered row by row ("rows") or back and forth ("serpentine":
// odd rows left to right, even rows right to left, as one walks a bench).
type Grid struct {
	Rows      int    `json:"rows"`
	Cols      int    `json:"cols"`
	Numbering string `json:"numbering"`
}

// Numbering schemes of a grid.
const (
	RowWise    = "rows"
	Serpentine = "serpentine"
)

// Place returns the 1-based row and column of position pos (1-based).
func (g Grid) Place(pos int) (row, col int) {
	row = (pos-1)/g.Cols + 1
	col = (pos-1)%g.Cols + 1
	if g.Numbering == Serpentine && row%2 == 0 {
		col = g.Cols - col + 1
	}
	return row, col
}

// Treatment is one combination of factor levels.
type Treatment struct {
	Index  int
	Name   string   // the levels joined by " × "
	Levels []string // one level per factor
}

// Treatments returns the full factorial of the factor levels, the first
// factor varying slowest.
func (p Plan) Treatments() []Treatment {
	combos := [][]string{{}}
	for _, f := range p.Factors {
		var next [][]string
		for _, c := range combos {
			for _, l := range f.Levels {
				next = append(next, append(append([]string{}, c...), l))
			}
		}
		combos = next
	}
	out := make([]Treatment, len(combos))
	for i, c := range combos {
		out[i] = Treatment{Index: i, Name: strings.Join(c, " × "), Levels: c}
	}
	return out
}

// BlockSize returns the number of units in each block of a plan without a
// unit list: the sum of Reps. With a unit list blocks may differ in size;
// see BlockSizes.
func (p Plan) BlockSize() int {
	n := 0
	for _, r := range p.Reps {
		n += r
	}
	return n
}

// BlockSizes returns the number of units in each block (index 0 is block 1).
func (p Plan) BlockSizes() []int {
	s := make([]int, p.Blocks)
	if p.Units == nil {
		for i := range s {
			s[i] = p.BlockSize()
		}
		return s
	}
	for _, u := range p.Units {
		if u.Block >= 1 && u.Block <= p.Blocks {
			s[u.Block-1]++
		}
	}
	return s
}

// MaxBlockSize returns the size of the largest block.
func (p Plan) MaxBlockSize() int {
	m := 0
	for _, s := range p.BlockSizes() {
		m = max(m, s)
	}
	return m
}

// NumUnits returns the number of experimental units.
func (p Plan) NumUnits() int {
	if p.Units != nil {
		return len(p.Units)
	}
	return p.BlockSize() * p.Blocks
}

// BlockLabel returns the name of block b (1-based): the label from the unit
// list, or the number.
func (p Plan) BlockLabel(b int) string {
	for _, u := range p.Units {
		if u.Block == b && u.BlockLabel != "" {
			return u.BlockLabel
		}
	}
	return strconv.Itoa(b)
}

// Canonical returns the plan's canonical JSON form.
func (p Plan) Canonical() []byte {
	b, err := json.Marshal(p)
	if err != nil {
		panic("design: plan does not marshal: " + err.Error())
	}
	return b
}

// Fingerprint returns the SHA-256 of the canonical form, in hexadecimal.
func (p Plan) Fingerprint() string {
	sum := sha256.Sum256(p.Canonical())
	return hex.EncodeToString(sum[:])
}

// ParsePlan decodes a plan from its JSON form and validates it.
func ParsePlan(b []byte) (Plan, error) {
	var p Plan
	dec := json.NewDecoder(strings.NewReader(string(b)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&p); err != nil {
		return Plan{}, fmt.Errorf("plan JSON: %w", err)
	}
	if err := p.Validate(); err != nil {
		return Plan{}, err
	}
	return p, nil
}

// Error is a problem with a plan, naming the field it concerns so that a
// command can name its flag.
type Error struct {
	Field string // factor, control, reps, blocks, block_name, response, design, units, grid
	Msg   string
}

func (e *Error) Error() string { return e.Msg }

func errf(field, format string, args ...any) error {
	return &Error{Field: field, Msg: fmt.Sprintf(format, args...)}
}

// Validate checks the plan and returns an *Error for the first problem.
func (p Plan) Validate() error {
	switch p.Design {
	case CRD, RCBD:
	default:
		return errf("design", "design %q: must be %q (completely randomised) or %q (randomised complete blocks)", p.Design, CRD, RCBD)
	}
	if len(p.Factors) == 0 {
		return errf("factor", "no treatment factor: give at least one, for example feed=A,B,C")
	}
	if len(p.Factors) > 4 {
		return errf("factor", "%d factors: at most 4 are supported", len(p.Factors))
	}
	names := map[string]bool{}
	for _, f := range p.Factors {
		if strings.TrimSpace(f.Name) == "" {
			return errf("factor", "a factor has no name")
		}
		if names[f.Name] {
			return errf("factor", "factor %q is given twice", f.Name)
		}
		names[f.Name] = true
		if len(f.Levels) < 2 {
			return errf("factor", "factor %q needs at least 2 levels", f.Name)
		}
		seen := map[string]bool{}
		for _, l := range f.Levels {
			if strings.TrimSpace(l) == "" {
				return errf("factor", "factor %q has an empty level name", f.Name)
			}
			if seen[l] {
				return errf("factor", "factor %q: level %q is given twice", f.Name, l)
			}
			seen[l] = true
		}
	}
	if p.Control != "" {
		if len(p.Factors) != 1 {
			return errf("control", "a control level is supported for one-factor plans only")
		}
		found := false
		for _, l := range p.Factors[0].Levels {
			found = found || l == p.Control
		}
		if !found {
			return errf("control", "control %q is not a level of factor %q (levels: %s)", p.Control, p.Factors[0].Name, strings.Join(p.Factors[0].Levels, ", "))
		}
	}
	nt := len(p.Treatments())
	if len(p.Reps) != nt {
		return errf("reps", "%d replication counts for %d treatments", len(p.Reps), nt)
	}
	for i, r := range p.Reps {
		if r < 1 {
			return errf("reps", "treatment %q has replication %d: must be at least 1", p.Treatments()[i].Name, r)
		}
	}
	if p.Design == RCBD && p.Blocks < 2 {
		return errf("blocks", "a randomised complete block design needs at least 2 blocks")
	}
	if p.Blocks < 1 {
		return errf("blocks", "%d blocks: must be at least 1", p.Blocks)
	}
	if p.Units != nil && p.Design == RCBD {
		for _, r := range p.Reps {
			if r != 1 {
				return errf("reps", "with a unit list the block sizes set the replication; leave the replication at 1")
			}
		}
	}
	if p.Design == CRD && p.Blocks != 1 {
		return errf("blocks", "a completely randomised design has no blocks; use design %q for %d blocks", RCBD, p.Blocks)
	}
	if p.Design == RCBD && p.Blocks < 2 {
		return errf("blocks", "a randomised complete block design needs at least 2 blocks")
	}
	if strings.TrimSpace(p.BlockName) == "" {
		return errf("block_name", "the block name is empty (for example bench, litter, day)")
	}
	if p.Units != nil {
		if err := p.validateUnits(nt); err != nil {
			return err
		}
	}
	if n := p.NumUnits(); n > MaxUnits {
		return errf("reps", "%d units: more than a worksheet can hold (%d rows below the header)", n, MaxUnits)
	}
	if p.Subsamples < 0 || p.Subsamples > 1000 {
		return errf("subsamples", "%d subsamples per unit: give 2 to 1000 (or 1 for one measurement per unit)", p.Subsamples)
	}
	if n := p.NumUnits() * max(p.Subsamples, 1); n > MaxUnits {
		return errf("subsamples", "%d units × %d subsamples = %d rows: more than a worksheet can hold (%d)", p.NumUnits(), p.Subsamples, n, MaxUnits)
	}
	if g := p.Grid; g != nil {
		if g.Rows < 1 || g.Cols < 1 {
			return errf("grid", "grid %dx%d: rows and columns must be at least 1", g.Rows, g.Cols)
		}
		if g.Numbering != RowWise && g.Numbering != Serpentine {
			return errf("grid", "grid numbering %q: must be %q or %q", g.Numbering, RowWise, Serpentine)
		}
		if m := p.MaxBlockSize(); g.Rows*g.Cols < m {
			return errf("grid", "grid %dx%d holds %d places, but a %s has %d units; use a larger grid", g.Rows, g.Cols, g.Rows*g.Cols, p.BlockName, m)
		}
	}
	rn := map[string]bool{}
	for _, r := range p.Responses {
		if strings.TrimSpace(r.Name) == "" {
			return errf("response", "a response has no name")
		}
		if rn[r.Name] || names[r.Name] {
			return errf("response", "response %q clashes with another response or factor", r.Name)
		}
		rn[r.Name] = true
		if r.Min != nil && r.Max != nil && *r.Min > *r.Max {
			return errf("response", "response %q: range %g..%g is empty", r.Name, *r.Min, *r.Max)
		}
	}
	return nil
}

// Plural returns the English plural of a block name: bench → benches,
// litter → litters, day → days, colony → colonies, box → boxes, batch →
// batches, mouse → mice.
func Plural(word string) string {
	switch {
	case strings.HasSuffix(word, "mouse"):
		return strings.TrimSuffix(word, "mouse") + "mice"
	case word == "":
		return word
	case strings.HasSuffix(word, "s"), strings.HasSuffix(word, "x"), strings.HasSuffix(word, "z"),
		strings.HasSuffix(word, "ch"), strings.HasSuffix(word, "sh"):
		return word + "es"
	case strings.HasSuffix(word, "y") && len(word) > 1 && !strings.ContainsRune("aeiou", rune(word[len(word)-2])):
		return word[:len(word)-1] + "ies"
	}
	return word + "s"
}

// validateUnits checks a given unit list against the plan.
func (p Plan) validateUnits(nt int) error {
	ids := map[string]bool{}
	for i, u := range p.Units {
		if strings.TrimSpace(u.ID) == "" {
			return errf("units", "unit list row %d has an empty ID", i+1)
		}
		if ids[u.ID] {
			return errf("units", "unit ID %q appears twice in the unit list", u.ID)
		}
		ids[u.ID] = true
		if u.Block < 1 || u.Block > p.Blocks {
			return errf("units", "unit %q is in block %d; the plan has %d", u.ID, u.Block, p.Blocks)
		}
	}
	for b, s := range p.BlockSizes() {
		if p.Design == RCBD && s < nt {
			return errf("units", "%s %s has %d unit(s), fewer than the %d treatments: every %s must hold each treatment at least once; merge it with another or leave it out",
				p.BlockName, p.BlockLabel(b+1), s, nt, p.BlockName)
		}
	}
	if p.Design == CRD {
		if sum := p.BlockSize(); sum != len(p.Units) {
			return errf("reps", "the replication adds up to %d units but the unit list has %d", sum, len(p.Units))
		}
	}
	return nil
}

// Generalised reports whether the plan is a generalised randomised block
// design: every treatment at least twice in every block (no unit list), so
// that the block × treatment interaction can be estimated and belongs in
// the model.
func (p Plan) Generalised() bool {
	if p.Design != RCBD || p.Units != nil {
		return false
	}
	for _, r := range p.Reps {
		if r < 2 {
			return false
		}
	}
	return true
}
