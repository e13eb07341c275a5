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
	"unicode"
	"unicode/utf8"
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
	// SplitPlot is the split-plot design: whole-plot treatments assigned to
	// main plots (chambers, benches, cages), in a completely randomised
	// design (Blocks = 1) or in blocks, and sub-plot treatments to the
	// sub-plots (pots, animals) within each main plot (see strata.go).
	SplitPlot Kind = "split-plot"
	// Latin is the Latin square: t treatments on a t × t grid, each once in
	// every row and column; Blocks independent squares (see strata.go).
	Latin Kind = "latin"
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
	// Kind is what is recorded: empty for a continuous measurement, or
	// KindCount, KindProportion (successes out of Trials, or out of the
	// number in the TrialsColumn entry column) or KindScore (an ordinal
	// score between Min and Max). Counts, proportions and scores are
	// whole numbers.
	Kind         string `json:"kind,omitempty"`
	Trials       int    `json:"trials,omitempty"`
	TrialsColumn string `json:"trials_column,omitempty"`
	// Covariate marks a baseline measurement taken before treatment (start
	// weight, seedling height), recorded and checked like a response and
	// adjusted for in the analysis (analysis of covariance).
	Covariate bool `json:"covariate,omitempty"`
	// Of and Time mark one time of a response measured repeatedly on the
	// same units: the column "Of@Time" (height@d7). TimeValue is the time as
	// a number when the times are numbers (days), for slopes and areas.
	Of        string   `json:"of,omitempty"`
	Time      string   `json:"time,omitempty"`
	TimeValue *float64 `json:"time_value,omitempty"`
}

// Response kinds.
const (
	KindContinuous = ""
	KindCount      = "count"
	KindProportion = "proportion"
	KindScore      = "score"
)

// Whole reports whether the response is recorded as whole numbers.
func (r Response) Whole() bool { return r.Kind != KindContinuous }

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
	// BlindMode says what a blind code stands for: BlindTreatment (one
	// code per treatment) or BlindUnit (one code per unit). Plans written
	// before codes were drawn from a secret leave it empty; their codes
	// come from the seed (randomize, step 6).
	BlindMode string `json:"blind_mode,omitempty"`
	// PerBlock, with a unit list in blocks, is the number of units taken
	// from each block; the others are spare (randomize, step 7).
	PerBlock int `json:"per_block,omitempty"`
	// Order adds a randomised measurement order within each block.
	Order bool `json:"order,omitempty"`
	// Subsamples is the number of measurements taken on each unit (leaves
	// on a plant, pups in a litter-housed cage): 0 or 1 for one. They are
	// recorded on their own rows and averaged to the unit for analysis.
	Subsamples int `json:"subsamples,omitempty"`
	// WholePlotFactors, in a split plot, is the number of leading Factors
	// applied to whole main plots; the others are sub-plot factors.
	WholePlotFactors int `json:"whole_plot_factors,omitempty"`
	// WholePlotName is what a main plot is called (chamber, bench, cage).
	WholePlotName string `json:"whole_plot_name,omitempty"`
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
	// Placement is RandomPlaces when a block may have fewer units than the
	// grid has places: the units are spread over the places at random
	// (randomize, step 8). Empty: position k is place k.
	Placement string `json:"placement,omitempty"`
}

// RandomPlaces is the Grid.Placement of units spread over a larger grid.
const RandomPlaces = "random"

// Blind modes.
const (
	BlindTreatment = "treatment"
	BlindUnit      = "unit"
)

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

// BlockSizes returns the number of units laid out in each block (index 0
// is block 1): with PerBlock, PerBlock (the rest of a block is spare).
func (p Plan) BlockSizes() []int {
	s := p.ListSizes()
	if p.PerBlock > 0 {
		for i := range s {
			s[i] = min(s[i], p.PerBlock)
		}
	}
	return s
}

// ListSizes returns the number of units of each block in the unit list
// (spares included), or the planned block sizes without a list.
func (p Plan) ListSizes() []int {
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

// NumUnits returns the number of experimental units laid out (spares of a
// PerBlock plan are not counted).
func (p Plan) NumUnits() int {
	if p.Units != nil {
		if p.PerBlock > 0 {
			n := 0
			for _, s := range p.BlockSizes() {
				n += s
			}
			return n
		}
		return len(p.Units)
	}
	return p.BlockSize() * p.Blocks
}

// BlockLabel returns the name of block b (1-based): the label from the unit
// list, or the number. It scans the unit list; loops over blocks use
// BlockLabels.
func (p Plan) BlockLabel(b int) string {
	for _, u := range p.Units {
		if u.Block == b && u.BlockLabel != "" {
			return u.BlockLabel
		}
	}
	return strconv.Itoa(b)
}

// BlockLabels returns the name of every block (index 0 is block 1), in one
// pass over the unit list.
func (p Plan) BlockLabels() []string {
	out := make([]string, p.Blocks)
	for _, u := range p.Units {
		if u.Block >= 1 && u.Block <= p.Blocks && out[u.Block-1] == "" {
			out[u.Block-1] = u.BlockLabel
		}
	}
	for i, l := range out {
		if l == "" {
			out[i] = strconv.Itoa(i + 1)
		}
	}
	return out
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
// For a blind plan with a BlindMode it is taken with the seed set to 0, so
// that it is the same with and without the key and cannot be used to search
// for the seed; the key file binds the seed (see Key).
func (p Plan) Fingerprint() string {
	if p.Blind && p.BlindMode != "" {
		p.Seed = 0
	}
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
	Field string // factor, control, reps, blocks, block_name, response, design, units, grid, blind, per_block, expect_n, title, subsamples, whole_plot, sub_plot, whole_plot_name, squares
	Msg   string
}

func (e *Error) Error() string { return e.Msg }

func errf(field, format string, args ...any) error {
	return &Error{Field: field, Msg: fmt.Sprintf(format, args...)}
}

// Validate checks the plan and returns an *Error for the first problem.
// Sizes are checked before anything is built from them, so that an absurd
// plan (4 factors of 100 levels, a million blocks of a million units) is
// refused with its limit instead of exhausting memory.
func (p Plan) Validate() error {
	for _, check := range []func() error{
		p.validateKind, p.validateNames, p.validateFactors, p.validateControl,
		p.validateReps, p.validateBlocks, p.validateSize, p.validateGrid,
		p.validateResponses, p.validateBlind, p.validateStrata,
	} {
		if err := check(); err != nil {
			return err
		}
	}
	return nil
}

func (p Plan) validateKind() error {
	switch p.Design {
	case CRD, RCBD, SplitPlot, Latin:
		return nil
	}
	return errf("design", "design %q: must be %q (completely randomised), %q (randomised complete blocks), %q or %q", p.Design, CRD, RCBD, SplitPlot, Latin)
}

// validateNames checks the free texts of the plan: title and block name.
func (p Plan) validateNames() error {
	if err := CheckText("title", "the title", p.Title, MaxTitleLen); err != nil {
		return err
	}
	if strings.TrimSpace(p.BlockName) == "" {
		return errf("block_name", "the block name is empty (for example bench, litter, day)")
	}
	return CheckText("block_name", "the block name", p.BlockName, MaxNameLen)
}

func (p Plan) validateFactors() error {
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
		if err := CheckText("factor", fmt.Sprintf("factor name %q", f.Name), f.Name, MaxNameLen); err != nil {
			return err
		}
		if names[f.Name] {
			return errf("factor", "factor %q is given twice", f.Name)
		}
		names[f.Name] = true
		if len(f.Levels) < 2 {
			return errf("factor", "factor %q needs at least 2 levels", f.Name)
		}
		if len(f.Levels) > MaxLevels {
			return errf("factor", "factor %q has %d levels: at most %d are supported", f.Name, len(f.Levels), MaxLevels)
		}
		seen := make(map[string]bool, len(f.Levels))
		for _, l := range f.Levels {
			if strings.TrimSpace(l) == "" {
				return errf("factor", "factor %q has an empty level name", f.Name)
			}
			if err := CheckText("factor", fmt.Sprintf("factor %q: level %q", f.Name, l), l, MaxNameLen); err != nil {
				return err
			}
			if seen[l] {
				return errf("factor", "factor %q: level %q is given twice", f.Name, l)
			}
			seen[l] = true
		}
	}
	if n := p.NumTreatments(); n > MaxTreatments {
		return errf("factor", "the factors make %s treatments: at most %d are supported; use fewer factors or levels", countText(n), MaxTreatments)
	}
	return nil
}

func (p Plan) validateControl() error {
	if p.Control == "" {
		return nil
	}
	if len(p.Factors) != 1 {
		return errf("control", "a control level is supported for one-factor plans only")
	}
	for _, l := range p.Factors[0].Levels {
		if l == p.Control {
			return nil
		}
	}
	return errf("control", "control %q is not a level of factor %q (levels: %s)", p.Control, p.Factors[0].Name, strings.Join(p.Factors[0].Levels, ", "))
}

func (p Plan) validateReps() error {
	nt := p.NumTreatments()
	if len(p.Reps) != nt {
		return errf("reps", "%d replication counts for %d treatments", len(p.Reps), nt)
	}
	for i, r := range p.Reps {
		if r < 1 {
			return errf("reps", "treatment %q has replication %d: must be at least 1", p.Treatments()[i].Name, r)
		}
		if r > MaxUnits {
			return errf("reps", "treatment %q has replication %d: more than a worksheet can hold (%d rows below the header)", p.Treatments()[i].Name, r, MaxUnits)
		}
	}
	if p.Units != nil && p.Design == RCBD {
		for _, r := range p.Reps {
			if r != 1 {
				return errf("reps", "with a unit list the block sizes set the replication; leave the replication at 1")
			}
		}
	}
	return nil
}

func (p Plan) validateBlocks() error {
	if p.Design == RCBD && p.Blocks < 2 {
		return errf("blocks", "%d blocks: a randomised complete block design needs at least 2 blocks", p.Blocks)
	}
	if p.Blocks < 1 {
		return errf("blocks", "%d blocks: must be at least 1", p.Blocks)
	}
	if p.Blocks > MaxUnits {
		return errf("blocks", "%d blocks: more than a worksheet can hold (%d rows below the header)", p.Blocks, MaxUnits)
	}
	if p.Design == CRD && p.Blocks != 1 {
		return errf("blocks", "a completely randomised design has no blocks; use design %q for %d blocks", RCBD, p.Blocks)
	}
	if p.PerBlock < 0 {
		return errf("per_block", "%d units per block: must be at least 1", p.PerBlock)
	}
	if p.PerBlock > 0 && (p.Units == nil || p.Design != RCBD) {
		return errf("per_block", "units per block are taken from a unit list with blocks (a block column or matching)")
	}
	if p.Units != nil {
		return p.validateUnits(p.NumTreatments())
	}
	return nil
}

// validateSize checks the number of units and of worksheet rows, without
// overflow: each factor is already bounded.
func (p Plan) validateSize() error {
	if p.Units == nil {
		if n := int64(p.BlockSize()) * int64(p.Blocks); n > MaxUnits {
			field := "reps"
			if p.Blocks > 1 {
				field = "blocks"
			}
			return errf(field, "%d blocks × %d units = %d units: more than a worksheet can hold (%d rows below the header)", p.Blocks, p.BlockSize(), n, MaxUnits)
		}
	}
	if p.Subsamples < 0 || p.Subsamples > 1000 {
		return errf("subsamples", "%d subsamples per unit: give 2 to 1000 (or 1 for one measurement per unit)", p.Subsamples)
	}
	if n := p.NumUnits() * max(p.Subsamples, 1); n > MaxUnits {
		return errf("subsamples", "%d units × %d subsamples = %d rows: more than a worksheet can hold (%d)", p.NumUnits(), p.Subsamples, n, MaxUnits)
	}
	return nil
}

func (p Plan) validateGrid() error {
	g := p.Grid
	if g == nil {
		return nil
	}
	if g.Rows < 1 || g.Cols < 1 {
		return errf("grid", "grid %dx%d: rows and columns must be at least 1", g.Rows, g.Cols)
	}
	if g.Rows > MaxGridSide || g.Cols > MaxGridSide || g.Rows*g.Cols > MaxGridPlaces {
		return errf("grid", "grid %dx%d: at most %d rows or columns and %d places per block are supported", g.Rows, g.Cols, MaxGridSide, MaxGridPlaces)
	}
	if g.Numbering != RowWise && g.Numbering != Serpentine {
		return errf("grid", "grid numbering %q: must be %q or %q", g.Numbering, RowWise, Serpentine)
	}
	if g.Placement != "" && g.Placement != RandomPlaces {
		return errf("grid", "grid placement %q: must be empty (units from place 1) or %q", g.Placement, RandomPlaces)
	}
	if m := p.MaxBlockSize(); g.Rows*g.Cols < m {
		return errf("grid", "grid %dx%d holds %d places, but a %s has %d units; use a larger grid", g.Rows, g.Cols, g.Rows*g.Cols, p.BlockName, m)
	}
	return nil
}

func (p Plan) validateResponses() error {
	names := map[string]bool{}
	for _, f := range p.Factors {
		names[f.Name] = true
	}
	rn := map[string]bool{}
	for _, r := range p.Responses {
		if strings.TrimSpace(r.Name) == "" {
			return errf("response", "a response has no name")
		}
		if err := CheckText("response", fmt.Sprintf("response name %q", r.Name), r.Name, MaxNameLen); err != nil {
			return err
		}
		if rn[r.Name] || names[r.Name] {
			return errf("response", "response %q clashes with another response or factor", r.Name)
		}
		rn[r.Name] = true
		if r.Min != nil && r.Max != nil && *r.Min > *r.Max {
			return errf("response", "response %q: range %g..%g is empty", r.Name, *r.Min, *r.Max)
		}
		if err := r.validKind(); err != nil {
			return err
		}
	}
	return nil
}

// validKind checks the fields that go with the response's kind.
func (r Response) validKind() error {
	switch r.Kind {
	case KindContinuous, KindCount:
	case KindProportion:
		if (r.Trials > 0) == (r.TrialsColumn != "") {
			return errf("response", "response %q: a proportion needs the number of trials per unit, either fixed (of=50) or from a column (of=COLUMN), not both", r.Name)
		}
		if r.Trials < 0 {
			return errf("response", "response %q: %d trials: must be 1 or more", r.Name, r.Trials)
		}
	case KindScore:
		if r.Min == nil || r.Max == nil {
			return errf("response", "response %q: a score needs its range, for example score/0..4", r.Name)
		}
	default:
		return errf("response", "response %q: kind %q: must be count, proportion or score (or none for a continuous measurement)", r.Name, r.Kind)
	}
	return nil
}

func (p Plan) validateBlind() error {
	switch {
	case p.BlindMode == "":
	case !p.Blind:
		return errf("blind", "blind mode %q without blinding", p.BlindMode)
	case p.BlindMode != BlindTreatment && p.BlindMode != BlindUnit:
		return errf("blind", "blind mode %q: must be %q (one code per treatment) or %q (one code per unit)", p.BlindMode, BlindTreatment, BlindUnit)
	}
	return nil
}

// Limits on a plan, checked before anything is built from it.
const (
	MaxLevels     = 1000   // levels of one factor
	MaxTreatments = 10000  // treatments (the product of the levels)
	MaxGridSide   = 1000   // rows or columns of a grid
	MaxGridPlaces = 100000 // places of a grid (per block)
	MaxNameLen    = 255    // characters of a factor, level, response or block name
	MaxTitleLen   = 1000   // characters of the title
)

// CheckText refuses a name that a workbook cell, a CSV file or a terminal
// would mangle: invalid UTF-8, NUL or other control characters (newlines,
// tabs), or more than max characters. field names the plan field for the
// error; what describes the text.
func CheckText(field, what, s string, max int) error {
	if !utf8.ValidString(s) {
		return errf(field, "%s is not valid UTF-8 text; retype it", strings.ToValidUTF8(what, "?"))
	}
	for _, r := range s {
		if unicode.IsControl(r) {
			return errf(field, "%s contains a control character (%U, such as a newline, tab or NUL); use plain text on one line", what, r)
		}
	}
	if n := utf8.RuneCountInString(s); n > max {
		if len(what) > 80 {
			what = string([]rune(what)[:60]) + "…"
		}
		return errf(field, "%s is %d characters long: at most %d are allowed", what, n, max)
	}
	return nil
}

// NumTreatments returns the number of treatments, the product of the
// factors' level counts, without building them (saturating at
// MaxTreatments+1, so that an absurd product does not overflow).
func (p Plan) NumTreatments() int {
	if len(p.Factors) == 0 {
		return 0
	}
	n := 1
	for _, f := range p.Factors {
		n *= len(f.Levels)
		if n > MaxTreatments {
			return MaxTreatments + 1
		}
	}
	return n
}

func countText(n int) string {
	if n > MaxTreatments {
		return fmt.Sprintf("more than %d", MaxTreatments)
	}
	return strconv.Itoa(n)
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

// validateUnits checks a given unit list against the plan, in time linear
// in its length.
func (p Plan) validateUnits(nt int) error {
	if len(p.Units) > MaxUnits {
		return errf("units", "%d units: more than a worksheet can hold (%d rows below the header)", len(p.Units), MaxUnits)
	}
	ids := make(map[string]bool, len(p.Units))
	for i, u := range p.Units {
		if strings.TrimSpace(u.ID) == "" {
			return errf("units", "unit list row %d has an empty ID", i+1)
		}
		if err := CheckText("units", fmt.Sprintf("unit ID %q", u.ID), u.ID, MaxNameLen); err != nil {
			return err
		}
		if err := CheckText("units", fmt.Sprintf("block %q of unit %q", u.BlockLabel, u.ID), u.BlockLabel, MaxNameLen); err != nil {
			return err
		}
		if ids[u.ID] {
			return errf("units", "unit ID %q appears twice in the unit list", u.ID)
		}
		ids[u.ID] = true
		if u.Block < 1 || u.Block > p.Blocks {
			return errf("units", "unit %q is in block %d; the plan has %d", u.ID, u.Block, p.Blocks)
		}
	}
	labels := p.BlockLabels()
	for b, s := range p.ListSizes() {
		if s == 0 {
			return errf("units", "%s %s has no units", p.BlockName, labels[b])
		}
		if p.PerBlock > 0 && s < p.PerBlock {
			return errf("per_block", "%s %s has %d unit(s), fewer than the %d to take from each %s; leave it out, or take fewer per %s",
				p.BlockName, labels[b], s, p.PerBlock, p.BlockName, p.BlockName)
		}
		eff := s
		if p.PerBlock > 0 {
			eff = p.PerBlock
		}
		if p.Design == RCBD && eff < nt {
			if p.PerBlock > 0 {
				return errf("per_block", "%d units per %s are fewer than the %d treatments: every %s must hold each treatment at least once (incomplete blocks need a balanced incomplete block plan, which allot does not make)",
					p.PerBlock, p.BlockName, nt, p.BlockName)
			}
			return errf("units", "%s %s has %d unit(s), fewer than the %d treatments: every %s must hold each treatment at least once; merge it with another or leave it out",
				p.BlockName, labels[b], s, nt, p.BlockName)
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
	if p.Design != RCBD {
		return false
	}
	if p.Units != nil {
		// Blocks of a unit list: every block a multiple (2 or more) of the
		// number of treatments, so each holds every treatment equally often.
		nt := len(p.Reps)
		for _, s := range p.BlockSizes() {
			if nt == 0 || s%nt != 0 || s/nt < 2 {
				return false
			}
		}
		return true
	}
	for _, r := range p.Reps {
		if r < 2 {
			return false
		}
	}
	return true
}

// DesignName names the design in words: "completely randomised design",
// "randomised complete block design" (each treatment once in every block),
// "generalised randomised block design" (each treatment equally often, at
// least twice, in every block), "randomised block design with unequal
// blocks" (blocks of a unit list that differ in size), or "randomised block
// design with unequal replication" (every treatment in every block, some
// more often than others).
func (p Plan) DesignName() string {
	if n := p.strataName(); n != "" {
		return n
	}
	if p.Design != RCBD {
		return "completely randomised design"
	}
	if p.Generalised() {
		return "generalised randomised block design"
	}
	if p.Units == nil {
		for _, r := range p.Reps {
			if r != p.Reps[0] {
				return "randomised block design with unequal replication"
			}
		}
		return "randomised complete block design"
	}
	nt := len(p.Reps)
	for _, s := range p.BlockSizes() {
		if s < nt {
			return "incomplete block design"
		}
	}
	sizes := p.BlockSizes()
	for _, s := range sizes {
		if s != sizes[0] {
			return "randomised block design with unequal blocks"
		}
	}
	if sizes[0] != nt {
		return "randomised block design with unequal replication within blocks"
	}
	return "randomised complete block design"
}
