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
	Title  string   `toml:"title"`
	Design string   `toml:"design"`
	Factor []string `toml:"factor"` // NAME=L1,L2,...
	// Covariate declares baseline measurements (NAME[:MIN..MAX]); Times
	// the times a response is measured at (t1,t2,...).
	Covariate []string  `toml:"covariate"`
	Times     string    `toml:"times"`
	Control   string    `toml:"control"`
	Reps      string    `toml:"reps"` // R, or NAME=R,...,default=R
	Blocks    int       `toml:"blocks"`
	BlockName string    `toml:"block_name"`
	Response  []string  `toml:"response"` // NAME or NAME:MIN..MAX
	Seed      *SeedText `toml:"seed"`     // an integer, or a string for seeds of 2^63 and above
	// Unit list: a CSV file with a header row.
	Units       string      `toml:"units"`
	IDColumn    string      `toml:"id_column"`
	BlockColumn string      `toml:"block_column"`
	MatchOn     string      `toml:"match_on"`
	Grid        string      `toml:"grid"` // ROWSxCOLS
	Numbering   string      `toml:"numbering"`
	Blind       BlindChoice `toml:"blind"` // "", "treatment" or "unit" (true means "treatment")
	Order       bool        `toml:"order"`
	Subsamples  int         `toml:"subsamples"`
	// PerBlock takes this many units from each block of a unit list; the
	// rest are spare.
	PerBlock int `toml:"per_block"`
	// AllowUnequal accepts a unit list whose blocks differ in size (or are
	// not a multiple of the number of treatments) and uses every unit.
	AllowUnequal bool `toml:"allow_unequal"`
	// ExpectN is the number of units justified (by allot size, say): the
	// plan is refused when it uses another number.
	ExpectN int `toml:"expect_n"`
	// Split plots and Latin squares (strata_spec.go).
	WholePlot     []string `toml:"whole_plot"` // NAME=L1,L2,...
	SubPlot       []string `toml:"sub_plot"`
	WholePlotName string   `toml:"whole_plot_name"`
	Squares       int      `toml:"squares"`
}

// BlindChoice is the blinding asked for: "" (none), BlindTreatment or
// BlindUnit. In a spec file, blind = true means BlindTreatment. It is a
// flag value (pflag.Value) as well.
type BlindChoice string

// UnmarshalTOML accepts true, false, "treatment" and "unit".
func (b *BlindChoice) UnmarshalTOML(v any) error {
	switch x := v.(type) {
	case bool:
		*b = ""
		if x {
			*b = BlindTreatment
		}
		return nil
	case string:
		return b.Set(x)
	}
	return fmt.Errorf("blind: give true, false, %q or %q", BlindTreatment, BlindUnit)
}

// Set parses a flag value.
func (b *BlindChoice) Set(v string) error {
	switch v {
	case BlindTreatment, BlindUnit:
		*b = BlindChoice(v)
	case "", "false", "none":
		*b = ""
	case "true":
		*b = BlindTreatment
	default:
		return fmt.Errorf("must be %q (one code per treatment, the default) or %q (one code per unit)", BlindTreatment, BlindUnit)
	}
	return nil
}

func (b *BlindChoice) String() string { return string(*b) }

// Type names the flag's value in help.
func (b *BlindChoice) Type() string { return "mode" }

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

// ParseFactor parses NAME=L1,L2,... or NAME=K, K levels named NAME1 to
// NAMEK (as allot size reads a count).
func ParseFactor(s string) (Factor, error) {
	name, levels, ok := strings.Cut(s, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" {
		return Factor{}, errf("factor", "factor %q: write NAME=LEVEL1,LEVEL2,..., or NAME=K for K levels, for example feed=F0,F1,F2 or dose=3", s)
	}
	f := Factor{Name: name}
	if k, err := strconv.Atoi(strings.TrimSpace(levels)); err == nil && k >= 2 {
		if k > MaxLevels {
			return Factor{}, errf("factor", "factor %q: %d levels; at most %d are supported", s, k, MaxLevels)
		}
		for i := 1; i <= k; i++ {
			f.Levels = append(f.Levels, name+strconv.Itoa(i))
		}
		return f, nil
	}
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

// withCovariatesAndTimes puts the baseline covariates (--covariate, each a
// response declaration) first and, with --times, replaces each response by
// one column per time (NAME@TIME), in time order. Times that all parse as
// numbers carry TimeValue.
func withCovariatesAndTimes(rs []Response, covs []string, times string) ([]Response, error) {
	var out []Response
	for _, c := range covs {
		r, err := ParseResponse(c)
		if err != nil {
			var de *Error
			if errors.As(err, &de) {
				return nil, errf("covariate", "--covariate %s: %s", c, de.Msg)
			}
			return nil, err
		}
		r.Covariate = true
		out = append(out, r)
	}
	if strings.TrimSpace(times) == "" {
		return append(out, rs...), nil
	}
	var ts []string
	seen := map[string]bool{}
	for _, t := range strings.Split(times, ",") {
		t = strings.TrimSpace(t)
		if t == "" || seen[t] || strings.Contains(t, "@") {
			return nil, errf("times", "--times %s: give distinct times, for example d0,d7,d14 or 0,7,14 (no @)", times)
		}
		seen[t] = true
		ts = append(ts, t)
	}
	if len(ts) < 2 || len(ts) > 100 {
		return nil, errf("times", "--times %s: give 2 to 100 times", times)
	}
	vals := make([]*float64, len(ts))
	numeric := true
	for i, t := range ts {
		v, err := strconv.ParseFloat(t, 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || i > 0 && vals[i-1] != nil && v <= *vals[i-1] {
			numeric = false
			break
		}
		vals[i] = &v
	}
	if len(rs) == 0 {
		return nil, errf("times", "--times needs the response measured at each time (--response NAME)")
	}
	for _, r := range rs {
		for i, t := range ts {
			x := r
			x.Name, x.Of, x.Time = r.Name+"@"+t, r.Name, t
			if numeric {
				x.TimeValue = vals[i]
			}
			out = append(out, x)
		}
	}
	return out, nil
}

// withTrialsColumns adds, for each proportion counted out of a number per
// unit (of=COLUMN), that column as a count response of its own (at least 1)
// unless it is declared already, so that the workbook has a cell for it.
func withTrialsColumns(rs []Response) []Response {
	have := map[string]bool{}
	for _, r := range rs {
		have[r.Name] = true
	}
	for _, r := range rs {
		if r.Kind == KindProportion && r.TrialsColumn != "" && !have[r.TrialsColumn] {
			one := 1.0
			rs = append(rs, Response{Name: r.TrialsColumn, Kind: KindCount, Min: &one})
			have[r.TrialsColumn] = true
		}
	}
	return rs
}

// ParseResponse parses a response declaration:
//
//	NAME                      a continuous measurement
//	NAME:MIN..MAX             with its plausible range (either bound may be empty)
//	NAME:count                a count (whole number, 0 or more)
//	NAME:proportion/of=50     successes out of 50 trials per unit
//	NAME:proportion/of=COL    successes out of the number in entry column COL
//	NAME:score/0..4           an ordinal score, whole numbers 0 to 4
func ParseResponse(s string) (Response, error) {
	name, rng, hasRange := strings.Cut(s, ":")
	r := Response{Name: strings.TrimSpace(name)}
	if r.Name == "" {
		return r, errf("response", "response %q has no name; write NAME or NAME:MIN..MAX, for example height_cm:0..200", s)
	}
	if !hasRange {
		return r, nil
	}
	kind, arg, _ := strings.Cut(strings.TrimSpace(rng), "/")
	switch kind {
	case KindCount:
		if arg != "" {
			return r, errf("response", "response %q: a count takes no argument; write %s:count", s, r.Name)
		}
		zero := 0.0
		r.Kind, r.Min = KindCount, &zero
		return r, nil
	case KindProportion:
		of, ok := strings.CutPrefix(arg, "of=")
		of = strings.TrimSpace(of)
		if !ok || of == "" {
			return r, errf("response", "response %q: say out of how many, for example %s:proportion/of=50 (or of=COLUMN for a number per unit)", s, r.Name)
		}
		zero := 0.0
		r.Kind, r.Min = KindProportion, &zero
		if n, err := strconv.Atoi(of); err == nil {
			if n < 1 || n > 1_000_000 {
				return r, errf("response", "response %q: of=%d: the number of trials must be between 1 and 1000000", s, n)
			}
			r.Trials = n
			mx := float64(n)
			r.Max = &mx
		} else {
			r.TrialsColumn = of
		}
		return r, nil
	case KindScore:
		lo, hi, ok := strings.Cut(arg, "..")
		a, errA := strconv.Atoi(strings.TrimSpace(lo))
		b, errB := strconv.Atoi(strings.TrimSpace(hi))
		if !ok || errA != nil || errB != nil || a >= b {
			return r, errf("response", "response %q: write the score's range as whole numbers MIN..MAX, for example %s:score/0..4", s, r.Name)
		}
		fa, fb := float64(a), float64(b)
		r.Kind, r.Min, r.Max = KindScore, &fa, &fb
		return r, nil
	}
	lo, hi, ok := strings.Cut(rng, "..")
	if !ok {
		return r, errf("response", "response %q: write the range as MIN..MAX (for example 0..200), or the kind: count, proportion/of=N, score/MIN..MAX", s)
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
	given := make([]string, len(tr))
	for _, part := range strings.Split(s, ",") {
		k, v, ok := strings.Cut(part, "=")
		k = strings.TrimSpace(k)
		n, err := strconv.Atoi(strings.TrimSpace(v))
		if !ok || err != nil || n < 1 {
			return nil, errf("reps", "replication %q: write R, or TREATMENT=R,...,default=R with whole numbers of at least 1 (for example control=8,default=6)", s)
		}
		if n > MaxUnits {
			return nil, errf("reps", "replication %q: %d is more than a worksheet can hold (%d rows below the header)", s, n, MaxUnits)
		}
		if k == "default" {
			if def != 0 {
				return nil, errf("reps", "replication %q gives default twice; give it once", s)
			}
			def = n
			continue
		}
		i, known := byName[k]
		if !known {
			return nil, errf("reps", "replication %q names %q, which is not a treatment (treatments: %s)", s, k, treatmentNames(tr))
		}
		if set[i] {
			return nil, errf("reps", "replication %q gives treatment %q twice (as %q and %q); give it once", s, tr[i].Name, given[i], k)
		}
		out[i], set[i], given[i] = n, true, k
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
	if rows > MaxGridSide || cols > MaxGridSide || rows*cols > MaxGridPlaces {
		return nil, errf("grid", "grid %q: at most %d rows or columns and %d places per block are supported", s, MaxGridSide, MaxGridPlaces)
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
	var members [][]int
	for i, r := range rows {
		b, ok := num[r.Block]
		if !ok {
			b = len(members)
			num[r.Block] = b
			members = append(members, nil)
		}
		members[b] = append(members[b], i)
	}
	out := make([]UnitSpec, 0, len(rows))
	for b, m := range members {
		for _, i := range m {
			r := rows[i]
			out = append(out, UnitSpec{ID: r.ID, Block: b + 1, BlockLabel: r.Block, Covariate: r.Covariate})
		}
	}
	return out, len(members)
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
//
// Defaults that would give a useless design are refused: a completely
// randomised plan needs its replication (1 unit per treatment leaves no
// error df), and a unit list whose blocks are unequal, or not a multiple of
// the number of treatments, needs PerBlock or AllowUnequal. Blocks (or a
// block column, or matching) without a design mean randomised blocks.
func (s Spec) Resolve(units []UnitRow) (Plan, error) {
	if s.strata() {
		return s.resolveStrata(units)
	}
	if err := s.refuseStrataKeys(); err != nil {
		return Plan{}, err
	}
	p, err := s.basePlan()
	if err != nil {
		return Plan{}, err
	}
	nt := p.NumTreatments()
	repsText := s.Reps
	if repsText == "" && p.Design == CRD {
		if units == nil {
			return Plan{}, errf("reps", "a completely randomised layout needs the replication: give the units per treatment, for example 6 (one unit per treatment leaves no error df to test with); allot size says how many")
		}
		// A completely randomised unit list shares its units equally.
		if len(units)%nt != 0 {
			return Plan{}, errf("reps", "%d units do not divide equally among %d treatments: give the replication per treatment, for example %s=%d,default=%d", len(units), nt, p.Treatments()[0].Name, len(units)/nt+len(units)%nt, len(units)/nt)
		}
		repsText = strconv.Itoa(len(units) / nt)
	}
	if p.Reps, err = ParseReps(repsText, p.Treatments(), p.Control); err != nil {
		return Plan{}, err
	}
	if s.Blocks < 0 || s.Blocks > MaxUnits {
		return Plan{}, errf("blocks", "%d blocks: give a whole number from 2 to %d", s.Blocks, MaxUnits)
	}
	p.Blocks = s.Blocks
	if p.Design == CRD && p.Blocks == 0 {
		p.Blocks = 1
	}
	if err := s.resolveUnits(&p, units); err != nil {
		return Plan{}, err
	}
	if p.Grid, err = ParseGrid(s.Grid, s.Numbering); err != nil {
		return Plan{}, err
	}
	if s.Numbering != "" && s.Grid == "" {
		return Plan{}, errf("grid", "a numbering needs a grid (ROWSxCOLS)")
	}
	if err := p.Validate(); err != nil {
		return Plan{}, err
	}
	if g := p.Grid; g != nil {
		for _, n := range p.BlockSizes() {
			if n < g.Rows*g.Cols {
				g.Placement = RandomPlaces
			}
		}
	}
	if err := s.checkExpectN(p); err != nil {
		return Plan{}, err
	}
	return p, nil
}

// basePlan resolves everything but replication, blocks and units, and
// checks the factors before any treatment is built from them.
func (s Spec) basePlan() (Plan, error) {
	p := Plan{Title: s.Title, Design: Kind(s.Design), Control: s.Control, BlockName: s.BlockName, Blind: s.Blind != "", BlindMode: string(s.Blind), Order: s.Order, Subsamples: s.Subsamples, PerBlock: s.PerBlock}
	if p.Subsamples == 1 {
		p.Subsamples = 0
	}
	if p.Title == "" {
		p.Title = "Untitled experiment"
	}
	if p.Design == "" {
		p.Design = CRD
		if s.Blocks > 0 || s.BlockColumn != "" || s.MatchOn != "" {
			p.Design = RCBD
		}
	}
	if p.BlockName == "" {
		p.BlockName = "block"
	}
	if s.Seed == nil {
		return Plan{}, errf("seed", "no seed: give one, or let allot draw one and record it")
	}
	p.Seed = uint64(*s.Seed)
	if s.PerBlock < 0 {
		return Plan{}, errf("per_block", "%d units per block: must be at least 1", s.PerBlock)
	}
	if s.ExpectN < 0 {
		return Plan{}, errf("expect_n", "%d units: must be at least 1", s.ExpectN)
	}
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
	p.Responses = withTrialsColumns(p.Responses)
	rs, err := withCovariatesAndTimes(p.Responses, s.Covariate, s.Times)
	if err != nil {
		return Plan{}, err
	}
	p.Responses = rs
	// Validate the parts that do not depend on replication and blocks
	// first; Validate checks the number of treatments before building them.
	probe := p
	probe.Blocks = 1
	if p.Design == RCBD {
		probe.Blocks = 2
	}
	if err := probe.Validate(); err != nil {
		var e *Error
		if errors.As(err, &e) && (e.Field == "factor" || e.Field == "control" || e.Field == "design" || e.Field == "response" || e.Field == "block_name" || e.Field == "title" || e.Field == "blind") {
			return Plan{}, err
		}
	}
	return p, nil
}

// resolveUnits sets the plan's units and blocks from the unit list.
func (s Spec) resolveUnits(p *Plan, units []UnitRow) error {
	if s.BlockColumn != "" && s.MatchOn != "" {
		return errf("units", "give either a block column or a covariate to match on, not both")
	}
	if (s.BlockColumn != "" || s.MatchOn != "") && p.Design != RCBD {
		return errf("units", "blocks from a unit list need design %q", RCBD)
	}
	if units == nil {
		if s.PerBlock > 0 {
			return errf("per_block", "units per block are taken from a unit list (--units with a block column)")
		}
		return nil
	}
	var err error
	switch {
	case s.BlockColumn != "":
		p.Units, p.Blocks = BlocksFromColumn(units)
	case s.MatchOn != "":
		if p.Units, p.Blocks, err = BlocksByMatching(units, p.NumTreatments(), s.MatchOn); err != nil {
			return err
		}
	case p.Design == RCBD:
		return errf("units", "a randomised complete block design with a unit list needs the blocks: a block column (litter) or a covariate to match on (weight)")
	default:
		p.Units = make([]UnitSpec, 0, len(units))
		for _, u := range units {
			p.Units = append(p.Units, UnitSpec{ID: u.ID, Block: 1, Covariate: u.Covariate})
		}
	}
	if s.PerBlock > 0 && p.Design != RCBD {
		return errf("per_block", "units per block are taken from a unit list with blocks (a block column)")
	}
	if s.Blocks != 0 && s.Blocks != p.Blocks && p.Design == RCBD {
		return errf("blocks", "%d blocks given, but the unit list makes %d", s.Blocks, p.Blocks)
	}
	if p.Design == RCBD && s.PerBlock == 0 && !s.AllowUnequal {
		return p.checkEqualBlocks()
	}
	return nil
}

// checkEqualBlocks refuses blocks of a unit list that differ in size or are
// not a multiple of the number of treatments: using every unit would
// replicate treatments unequally and lay out more units than a balanced
// design needs.
func (p Plan) checkEqualBlocks() error {
	nt := p.NumTreatments()
	sizes := p.ListSizes()
	lo, hi := sizes[0], sizes[0]
	for _, n := range sizes {
		lo, hi = min(lo, n), max(hi, n)
	}
	if lo < nt || (lo == hi && lo%nt == 0) {
		return nil // too small is reported by Validate, naming the block
	}
	k := lo / nt * nt
	what := fmt.Sprintf("the %s hold %d to %d units", Plural(p.BlockName), lo, hi)
	if lo == hi {
		what = fmt.Sprintf("every %s holds %d units, not a multiple of the %d treatments", p.BlockName, lo, nt)
	}
	return errf("units", "%s, so using every unit would replicate the %d treatments unequally within %s; give --per-block %d to take %d units of each %s at random (the rest marked spare), or --allow-unequal to use every unit", what, nt, Plural(p.BlockName), k, k, p.BlockName)
}

// checkExpectN compares the units laid out with the number justified.
func (s Spec) checkExpectN(p Plan) error {
	if s.ExpectN == 0 {
		return nil
	}
	n := p.NumUnits()
	if n == s.ExpectN {
		return nil
	}
	diff, dir := n-s.ExpectN, "more"
	if diff < 0 {
		diff, dir = -diff, "fewer"
	}
	why := ""
	switch {
	case p.Units != nil && p.PerBlock > 0:
		why = fmt.Sprintf("%d %s × %d units each", p.Blocks, Plural(p.BlockName), p.PerBlock)
	case p.Units != nil && p.Design == RCBD:
		why = fmt.Sprintf("the unit list's %d %s hold %d units in all; --per-block K takes K of each and marks the rest spare", p.Blocks, Plural(p.BlockName), n)
	case p.Units != nil:
		why = fmt.Sprintf("the unit list has %d units", n)
	case p.Design == RCBD:
		why = fmt.Sprintf("%d %s × %d units each (the replication); change --blocks or --reps", p.Blocks, Plural(p.BlockName), p.BlockSize())
	default:
		why = fmt.Sprintf("the replication adds up to %d; change --reps", n)
	}
	return errf("expect_n", "the layout uses %d units, %d %s than the %d justified (%s); lay out the justified number, or justify the new one", n, diff, dir, s.ExpectN, why)
}
