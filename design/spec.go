package design

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"
)

// Spec is a plan as a person writes it, in a spec file (TOML) or on the
// command line; Resolve turns it into a Plan. Every field has the name of
// the allot layout flag that sets it (with _ for -), and a flag given on
// the command line overrides the file.
//
// Example spec file:
//
//	title = "Nitrogen rates on lettuce"
//	design = "rcbd"
//	blocks = 4
//	block_name = "bench"
//	factor = ["nitrogen=N0,N50,N100"]
//	response = ["fresh_g:0..800"]
//	seed = 20261201
type Spec struct {
	Title     string    `toml:"title"`
	Design    string    `toml:"design"`
	Factor    []string  `toml:"factor"` // NAME=L1,L2,...
	Control   string    `toml:"control"`
	Reps      string    `toml:"reps"` // R, or NAME=R,...,default=R
	Blocks    int       `toml:"blocks"`
	BlockName string    `toml:"block_name"`
	Response  []string  `toml:"response"` // NAME or NAME:MIN..MAX
	Seed      *SeedText `toml:"seed"`     // an integer, or a string for seeds of 2^63 and above
	// Unit list: a CSV file with a header row.
	Units       string `toml:"units"`
	IDColumn    string `toml:"id_column"`
	BlockColumn string `toml:"block_column"`
	MatchOn     string `toml:"match_on"`
	Grid        string `toml:"grid"` // ROWSxCOLS
	Numbering   string `toml:"numbering"`
	Blind       bool   `toml:"blind"`
	Order       bool   `toml:"order"`
	Subsamples  int    `toml:"subsamples"`
}

// ParseSpec decodes a TOML spec file. Unknown keys are errors, so that a
// misspelt key is not silently ignored.
func ParseSpec(name string, b []byte) (Spec, error) {
	var s Spec
	md, err := toml.NewDecoder(bytes.NewReader(b)).Decode(&s)
	if err != nil {
		return Spec{}, fmt.Errorf("%s: %w", name, err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		keys := make([]string, len(und))
		for i, k := range und {
			keys[i] = k.String()
		}
		return Spec{}, fmt.Errorf("%s: unknown key(s) %s; the keys are the allot layout flag names with _ for -", name, strings.Join(keys, ", "))
	}
	return s, nil
}

// ParseFactor parses NAME=L1,L2,... (the level names; a plan's factors
// are checked further by Plan.Validate).
func ParseFactor(s string) (Factor, error) {
	name, levels, ok := strings.Cut(s, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" {
		return Factor{}, errf("factor", "factor %q: write NAME=LEVEL1,LEVEL2,..., for example feed=F0,F1,F2", s)
	}
	f := Factor{Name: name}
	for _, l := range strings.Split(levels, ",") {
		f.Levels = append(f.Levels, strings.TrimSpace(l))
	}
	return f, nil
}

// MaxCountLevels bounds the count form NAME=K of ParseFactorOrCount.
const MaxCountLevels = 1000

// ParseFactorOrCount parses NAME=L1,L2,... or NAME=K, K levels named 1 to
// K, where only the number of levels matters (planning a sample size). The
// levels must be at least 2, non-empty and distinct.
func ParseFactorOrCount(s string) (Factor, error) {
	name, levels, ok := strings.Cut(s, "=")
	if !ok || strings.TrimSpace(name) == "" || strings.TrimSpace(levels) == "" {
		return Factor{}, errf("factor", "%s: write NAME=LEVELS, for example dose=3 or diet=chow,fat", s)
	}
	var f Factor
	if k, err := strconv.Atoi(strings.TrimSpace(levels)); err == nil {
		if k > MaxCountLevels {
			return Factor{}, errf("factor", "%s: at most %d levels", s, MaxCountLevels)
		}
		f.Name = strings.TrimSpace(name)
		for i := 1; i <= k; i++ {
			f.Levels = append(f.Levels, strconv.Itoa(i))
		}
	} else if f, err = ParseFactor(s); err != nil {
		return Factor{}, err
	}
	seen := map[string]bool{}
	for _, l := range f.Levels {
		if l == "" || seen[l] {
			return Factor{}, errf("factor", "%s: level names must be non-empty and distinct", s)
		}
		seen[l] = true
	}
	if len(f.Levels) < 2 {
		return Factor{}, errf("factor", "%s: factor %q needs at least 2 levels", s, f.Name)
	}
	return f, nil
}

// ParseResponse parses NAME or NAME:MIN..MAX (either bound may be empty).
func ParseResponse(s string) (Response, error) {
	name, rng, hasRange := strings.Cut(s, ":")
	r := Response{Name: strings.TrimSpace(name)}
	if r.Name == "" {
		return r, errf("response", "response %q has no name; write NAME or NAME:MIN..MAX, for example height_cm:0..200", s)
	}
	if !hasRange {
		return r, nil
	}
	lo, hi, ok := strings.Cut(rng, "..")
	if !ok {
		return r, errf("response", "response %q: write the range as MIN..MAX, for example 0..200", s)
	}
	parse := func(v string) (*float64, error) {
		v = strings.TrimSpace(v)
		if v == "" {
			return nil, nil
		}
		x, err := strconv.ParseFloat(v, 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, errf("response", "response %q: %q is not a number", s, v)
		}
		return &x, nil
	}
	var err error
	if r.Min, err = parse(lo); err != nil {
		return r, err
	}
	if r.Max, err = parse(hi); err != nil {
		return r, err
	}
	if r.Min != nil && r.Max != nil && *r.Min > *r.Max {
		return r, errf("response", "response %q: the range is empty (minimum above maximum)", s)
	}
	return r, nil
}

// ParseReps parses the replication for treatments: "R" for every
// treatment, or "NAME=R,...,default=R" with treatment names; "control"
// names the control level when control is set and no treatment is itself
// called "control".
func ParseReps(s string, tr []Treatment, control string) ([]int, error) {
	s = strings.TrimSpace(s)
	out := make([]int, len(tr))
	if s == "" {
		s = "1"
	}
	if n, err := strconv.Atoi(s); err == nil {
		if n < 1 {
			return nil, errf("reps", "replication %d: must be at least 1", n)
		}
		for i := range out {
			out[i] = n
		}
		return out, nil
	}
	byName := map[string]int{}
	for i, t := range tr {
		byName[t.Name] = i
	}
	if _, taken := byName["control"]; !taken && control != "" {
		if i, ok := byName[control]; ok {
			byName["control"] = i
		}
	}
	def := 0
	set := make([]bool, len(tr))
	for _, part := range strings.Split(s, ",") {
		k, v, ok := strings.Cut(part, "=")
		k = strings.TrimSpace(k)
		n, err := strconv.Atoi(strings.TrimSpace(v))
		if !ok || err != nil || n < 1 {
			return nil, errf("reps", "replication %q: write R, or TREATMENT=R,...,default=R with whole numbers of at least 1 (for example control=8,default=6)", s)
		}
		if k == "default" {
			def = n
			continue
		}
		i, known := byName[k]
		if !known {
			return nil, errf("reps", "replication %q names %q, which is not a treatment (treatments: %s)", s, k, treatmentNames(tr))
		}
		out[i], set[i] = n, true
	}
	for i := range out {
		if !set[i] {
			if def == 0 {
				return nil, errf("reps", "replication %q gives no count for treatment %q; add it or default=R", s, tr[i].Name)
			}
			out[i] = def
		}
	}
	return out, nil
}

func treatmentNames(tr []Treatment) string {
	n := make([]string, len(tr))
	for i, t := range tr {
		n[i] = t.Name
	}
	return strings.Join(n, ", ")
}

// ParseGrid parses ROWSxCOLS.
func ParseGrid(s, numbering string) (*Grid, error) {
	if s == "" {
		return nil, nil
	}
	r, c, ok := strings.Cut(strings.ToLower(s), "x")
	rows, err1 := strconv.Atoi(strings.TrimSpace(r))
	cols, err2 := strconv.Atoi(strings.TrimSpace(c))
	if !ok || err1 != nil || err2 != nil || rows < 1 || cols < 1 {
		return nil, errf("grid", "grid %q: write ROWSxCOLS with whole numbers, for example 4x6", s)
	}
	if numbering == "" {
		numbering = RowWise
	}
	return &Grid{Rows: rows, Cols: cols, Numbering: numbering}, nil
}

// UnitRow is one row of a unit list.
type UnitRow struct {
	Line      int
	ID        string
	Block     string
	Covariate *float64
}

// CSVError is a problem in a CSV file (a unit list, or a plain data
// table), located by line and column.
type CSVError struct {
	File   string
	Line   int
	Column string
	Msg    string
}

func (e *CSVError) Error() string {
	loc := e.File
	if e.Line > 0 {
		loc += fmt.Sprintf(" line %d", e.Line)
	}
	if e.Column != "" {
		loc += fmt.Sprintf(" column %q", e.Column)
	}
	return loc + ": " + e.Msg
}

// ReadUnitList reads a CSV unit list with a header row: the ID column, and
// optionally a block column and a covariate column to match on.
func ReadUnitList(r io.Reader, file, idCol, blockCol, covCol string) ([]UnitRow, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	var recs [][]string
	var lines []int
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, &CSVError{File: file, Line: pe.Line, Msg: pe.Err.Error()}
			}
			return nil, &CSVError{File: file, Msg: err.Error()}
		}
		line, _ := cr.FieldPos(0)
		recs = append(recs, rec)
		lines = append(lines, line)
	}
	if len(recs) < 2 {
		return nil, &CSVError{File: file, Msg: "needs a header row and at least one unit"}
	}
	head := recs[0]
	col := func(name string) (int, error) {
		if name == "" {
			return -1, nil
		}
		for i, h := range head {
			if strings.TrimSpace(h) == name {
				return i, nil
			}
		}
		return -1, &CSVError{File: file, Line: 1, Column: name, Msg: fmt.Sprintf("no such column (columns: %s); name it with --id-column, --block-column or --match-on", strings.Join(head, ", "))}
	}
	ic, err := col(idCol)
	if err != nil {
		return nil, err
	}
	bc, err := col(blockCol)
	if err != nil {
		return nil, err
	}
	cc, err := col(covCol)
	if err != nil {
		return nil, err
	}
	seen := map[string]int{}
	var out []UnitRow
	for i, rec := range recs[1:] {
		line := lines[i+1]
		get := func(c int) string {
			if c < 0 || c >= len(rec) {
				return ""
			}
			return strings.TrimSpace(rec[c])
		}
		row := UnitRow{Line: line, ID: get(ic), Block: get(bc)}
		if row.ID == "" {
			if strings.TrimSpace(strings.Join(rec, "")) == "" {
				continue
			}
			return nil, &CSVError{File: file, Line: line, Column: idCol, Msg: "the unit ID is empty"}
		}
		if prev, dup := seen[row.ID]; dup {
			return nil, &CSVError{File: file, Line: line, Column: idCol, Msg: fmt.Sprintf("unit ID %q already appears on line %d; IDs must be unique", row.ID, prev)}
		}
		seen[row.ID] = line
		if bc >= 0 && row.Block == "" {
			return nil, &CSVError{File: file, Line: line, Column: blockCol, Msg: "the block is empty"}
		}
		if cc >= 0 {
			v, err := strconv.ParseFloat(get(cc), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &CSVError{File: file, Line: line, Column: covCol, Msg: fmt.Sprintf("%q is not a number", get(cc))}
			}
			row.Covariate = &v
		}
		out = append(out, row)
	}
	if len(out) == 0 {
		return nil, &CSVError{File: file, Msg: "lists no units"}
	}
	return out, nil
}

// BlocksFromColumn numbers blocks by the first appearance of each block
// label and returns the unit list in block order (list order within a
// block).
func BlocksFromColumn(rows []UnitRow) ([]UnitSpec, int) {
	num := map[string]int{}
	var labels []string
	for _, r := range rows {
		if _, ok := num[r.Block]; !ok {
			labels = append(labels, r.Block)
			num[r.Block] = len(labels)
		}
	}
	out := make([]UnitSpec, 0, len(rows))
	for b, l := range labels {
		for _, r := range rows {
			if r.Block == l {
				out = append(out, UnitSpec{ID: r.ID, Block: b + 1, BlockLabel: l, Covariate: r.Covariate})
			}
		}
	}
	return out, len(labels)
}

// BlocksByMatching sorts units on their covariate (ties by list order) and
// cuts them into consecutive blocks of size units: block 1 the smallest
// values (weight-matched blocks). The number of units must be a multiple of
// size.
func BlocksByMatching(rows []UnitRow, size int, covName string) ([]UnitSpec, int, error) {
	if len(rows)%size != 0 {
		return nil, 0, errf("units", "%d units do not divide into matched blocks of %d (one of each treatment): leave out %d or add %d, chosen by a rule fixed before randomisation",
			len(rows), size, len(rows)%size, size-len(rows)%size)
	}
	idx := make([]int, len(rows))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return *rows[idx[a]].Covariate < *rows[idx[b]].Covariate })
	out := make([]UnitSpec, len(rows))
	for k, i := range idx {
		b := k/size + 1
		out[k] = UnitSpec{ID: rows[i].ID, Block: b, BlockLabel: fmt.Sprintf("%s-%d", covName, b), Covariate: rows[i].Covariate}
	}
	return out, len(rows) / size, nil
}

// Resolve turns the spec into a validated plan. units is the parsed unit
// list (nil without one). The seed must be set (Seed != nil); drawing one is
// the caller's business, so that the plan records it.
func (s Spec) Resolve(units []UnitRow) (Plan, error) {
	p := Plan{Title: s.Title, Design: Kind(s.Design), Control: s.Control, BlockName: s.BlockName, Blind: s.Blind, Order: s.Order, Subsamples: s.Subsamples}
	if p.Subsamples == 1 {
		p.Subsamples = 0
	}
	if p.Title == "" {
		p.Title = "Untitled experiment"
	}
	if p.Design == "" {
		p.Design = CRD
	}
	if p.BlockName == "" {
		p.BlockName = "block"
	}
	if s.Seed == nil {
		return Plan{}, errf("seed", "no seed: give one, or let allot draw one and record it")
	}
	p.Seed = uint64(*s.Seed)
	for _, f := range s.Factor {
		fa, err := ParseFactor(f)
		if err != nil {
			return Plan{}, err
		}
		p.Factors = append(p.Factors, fa)
	}
	for _, r := range s.Response {
		resp, err := ParseResponse(r)
		if err != nil {
			return Plan{}, err
		}
		p.Responses = append(p.Responses, resp)
	}
	// Validate factors before building treatments from them.
	probe := p
	probe.Reps = make([]int, len(p.Treatments()))
	for i := range probe.Reps {
		probe.Reps[i] = 1
	}
	probe.Blocks = 1
	if p.Design == RCBD {
		probe.Blocks = 2
	}
	if err := probe.Validate(); err != nil {
		var e *Error
		if errors.As(err, &e) && (e.Field == "factor" || e.Field == "control" || e.Field == "design" || e.Field == "response" || e.Field == "block_name") {
			return Plan{}, err
		}
	}
	repsText := s.Reps
	if repsText == "" && units != nil && p.Design == CRD {
		// A completely randomised unit list shares its units equally.
		nt := len(p.Treatments())
		if len(units)%nt != 0 {
			return Plan{}, errf("reps", "%d units do not divide equally among %d treatments: give the replication per treatment, for example %s=%d,default=%d", len(units), nt, p.Treatments()[0].Name, len(units)/nt+len(units)%nt, len(units)/nt)
		}
		repsText = strconv.Itoa(len(units) / nt)
	}
	reps, err := ParseReps(repsText, p.Treatments(), p.Control)
	if err != nil {
		return Plan{}, err
	}
	p.Reps = reps
	p.Blocks = s.Blocks
	if p.Design == CRD && p.Blocks == 0 {
		p.Blocks = 1
	}
	if s.BlockColumn != "" && s.MatchOn != "" {
		return Plan{}, errf("units", "give either a block column or a covariate to match on, not both")
	}
	if (s.BlockColumn != "" || s.MatchOn != "") && p.Design != RCBD {
		return Plan{}, errf("units", "blocks from a unit list need design %q", RCBD)
	}
	if units != nil {
		switch {
		case s.BlockColumn != "":
			p.Units, p.Blocks = BlocksFromColumn(units)
		case s.MatchOn != "":
			if p.Units, p.Blocks, err = BlocksByMatching(units, len(p.Treatments()), s.MatchOn); err != nil {
				return Plan{}, err
			}
		case p.Design == RCBD:
			return Plan{}, errf("units", "a randomised complete block design with a unit list needs the blocks: a block column (litter) or a covariate to match on (weight)")
		default:
			for _, u := range units {
				p.Units = append(p.Units, UnitSpec{ID: u.ID, Block: 1, Covariate: u.Covariate})
			}
		}
		if s.Blocks != 0 && s.Blocks != p.Blocks && p.Design == RCBD {
			return Plan{}, errf("blocks", "%d blocks given, but the unit list makes %d", s.Blocks, p.Blocks)
		}
	}
	if p.Grid, err = ParseGrid(s.Grid, s.Numbering); err != nil {
		return Plan{}, err
	}
	if s.Numbering != "" && s.Grid == "" {
		return Plan{}, errf("grid", "a numbering needs a grid (ROWSxCOLS)")
	}
	return p, p.Validate()
}
