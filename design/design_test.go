package design

import (
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"strings"
	"testing"
)

func u64(v uint64) *SeedText { s := SeedText(v); return &s }

func TestResolveErrors(t *testing.T) {
	base := Spec{Factor: []string{"feed=A,B,C"}, Reps: "2", Seed: u64(1)}
	tests := []struct {
		name  string
		edit  func(*Spec)
		units []UnitRow
		field string
		want  string
	}{
		{"duplicate level", func(s *Spec) { s.Factor = []string{"feed=A,B,A"} }, nil, "factor", `level "A" is given twice`},
		{"one level", func(s *Spec) { s.Factor = []string{"feed=A"} }, nil, "factor", "needs at least 2 levels"},
		{"no factor", func(s *Spec) { s.Factor = nil }, nil, "factor", "no treatment factor"},
		{"five factors", func(s *Spec) { s.Factor = []string{"a=1,2", "b=1,2", "c=1,2", "d=1,2", "e=1,2"} }, nil, "factor", "at most 4"},
		{"control not a level", func(s *Spec) { s.Control = "Z" }, nil, "control", `control "Z" is not a level`},
		{"rcbd without blocks", func(s *Spec) { s.Design = "rcbd" }, nil, "blocks", "at least 2 blocks"},
		{"crd with blocks", func(s *Spec) { s.Design, s.Blocks = "crd", 3 }, nil, "blocks", "has no blocks"},
		{"bad design", func(s *Spec) { s.Design = "lattice" }, nil, "design", `design "lattice"`},
		{"reps unknown treatment", func(s *Spec) { s.Reps = "Q=3,default=2" }, nil, "reps", `names "Q"`},
		{"reps missing default", func(s *Spec) { s.Reps = "A=3" }, nil, "reps", `no count for treatment "B"`},
		{"reps zero", func(s *Spec) { s.Reps = "0" }, nil, "reps", "at least 1"},
		{"grid too small", func(s *Spec) { s.Design, s.Blocks, s.Reps, s.Grid = "rcbd", 2, "2", "2x2" }, nil, "grid", "holds 4 places, but a block has 6 units"},
		{"grid syntax", func(s *Spec) { s.Grid = "4by6" }, nil, "grid", "ROWSxCOLS"},
		{"response range", func(s *Spec) { s.Response = []string{"h:10..1"} }, nil, "response", "empty"},
		{"litter too small", func(s *Spec) { s.Design, s.BlockColumn, s.BlockName, s.Reps = "rcbd", "litter", "litter", "" },
			[]UnitRow{{ID: "a", Block: "L1"}, {ID: "b", Block: "L1"}, {ID: "c", Block: "L1"}, {ID: "d", Block: "L2"}, {ID: "e", Block: "L2"}},
			"units", "litter L2 has 2 unit(s), fewer than the 3 treatments"},
		{"matching remainder", func(s *Spec) { s.Design, s.MatchOn, s.Reps = "rcbd", "weight", "" },
			[]UnitRow{{ID: "a", Covariate: f(1)}, {ID: "b", Covariate: f(2)}, {ID: "c", Covariate: f(3)}, {ID: "d", Covariate: f(4)}},
			"units", "4 units do not divide into matched blocks of 3"},
		{"too many units", func(s *Spec) { s.Reps = "400000" }, nil, "reps", "more than a worksheet can hold"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s := base
			tt.edit(&s)
			_, err := s.Resolve(tt.units)
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("got %v, want *Error", err)
			}
			if e.Field != tt.field || !strings.Contains(e.Msg, tt.want) {
				t.Errorf("field %q msg %q; want %q containing %q", e.Field, e.Msg, tt.field, tt.want)
			}
		})
	}
}

func f(v float64) *float64 { return &v }

func TestResolve(t *testing.T) {
	s := Spec{Title: "t", Design: "rcbd", Blocks: 3, Factor: []string{"N=N0,N1", "K=K0,K1,K2"}, Reps: "N0 × K0=2,default=1", Seed: u64(5), Response: []string{"yield:0..", "height"}}
	p, err := s.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Treatments()) != 6 || p.Reps[0] != 2 || p.Reps[1] != 1 || p.Units != nil || p.NumUnits() != 21 {
		t.Errorf("plan %+v", p)
	}
	if *p.Responses[0].Min != 0 || p.Responses[0].Max != nil || p.Responses[1].Min != nil {
		t.Errorf("responses %+v", p.Responses)
	}
	if p.Treatments()[5].Name != "N1 × K2" {
		t.Errorf("treatment order: %v", p.Treatments())
	}
}

func TestCanonicalAndFingerprint(t *testing.T) {
	p, err := Spec{Factor: []string{"feed=A,B"}, Reps: "3", Seed: u64(9)}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	q, err := ParsePlan(p.Canonical())
	if err != nil {
		t.Fatal(err)
	}
	if q.Fingerprint() != p.Fingerprint() || len(p.Fingerprint()) != 64 {
		t.Error("fingerprint does not survive a round trip")
	}
	q.Seed++
	if q.Fingerprint() == p.Fingerprint() {
		t.Error("fingerprint ignores the seed")
	}
	if _, err := ParsePlan([]byte(`{"title":"x","extra":1}`)); err == nil {
		t.Error("unknown field accepted")
	}
}

func TestParseSpec(t *testing.T) {
	s, err := ParseSpec("trial.toml", []byte(`
title = "Lettuce"
design = "rcbd"
blocks = 4
block_name = "bench"
factor = ["nitrogen=N0,N50,N100"]
response = ["fresh_g:0..800"]
seed = 20261201
grid = "2x2"
numbering = "serpentine"
order = true
`))
	if err != nil {
		t.Fatal(err)
	}
	p, err := s.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if p.Blocks != 4 || p.Grid.Numbering != Serpentine || !p.Order || p.Seed != 20261201 {
		t.Errorf("%+v", p)
	}
	if _, err := ParseSpec("x.toml", []byte("blokcs = 4\n")); err == nil || !strings.Contains(err.Error(), "blokcs") {
		t.Errorf("misspelt key: %v", err)
	}
}

func TestReadUnitList(t *testing.T) {
	csv := "tag,litter,weight\nM1,L1,20\nM2,L1,21\n\nM3,L2,19.5\n"
	rows, err := ReadUnitList(strings.NewReader(csv), "mice.csv", "tag", "litter", "weight")
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 3 || rows[2].ID != "M3" || rows[2].Block != "L2" || *rows[2].Covariate != 19.5 || rows[2].Line != 5 {
		t.Errorf("%+v", rows)
	}
	for _, tt := range []struct{ csv, want string }{
		{"tag\nM1\nM1\n", `line 3 column "tag": unit ID "M1" already appears on line 2`},
		{"id\nM1\n", `column "tag": no such column`},
		{"tag,weight\nM1,heavy\n", `line 2 column "weight": "heavy" is not a number`},
		{"tag\n", "needs a header row and at least one unit"},
	} {
		_, err := ReadUnitList(strings.NewReader(tt.csv), "mice.csv", "tag", "", map[bool]string{true: "weight"}[strings.Contains(tt.csv, "weight")])
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%q: got %v, want %q", tt.csv, err, tt.want)
		}
	}
}

func TestGridPlace(t *testing.T) {
	g := Grid{Rows: 2, Cols: 3, Numbering: Serpentine}
	want := [][2]int{{1, 1}, {1, 2}, {1, 3}, {2, 3}, {2, 2}, {2, 1}}
	for i, w := range want {
		if r, c := g.Place(i + 1); r != w[0] || c != w[1] {
			t.Errorf("position %d at %d,%d; want %v", i+1, r, c, w)
		}
	}
}

func TestPlural(t *testing.T) {
	for in, want := range map[string]string{"bench": "benches", "litter": "litters", "day": "days", "colony": "colonies", "box": "boxes", "rack": "racks", "batch": "batches", "mouse": "mice", "cage": "cages"} {
		if got := Plural(in); got != want {
			t.Errorf("Plural(%q) = %q, want %q", in, got, want)
		}
	}
}

// The parsers never panic; what parses re-parses to the same value.
func FuzzParseReps(f *testing.F) {
	for _, s := range []string{"3", "A=2,default=1", "A=x", "", "default=4", ",=,"} {
		f.Add(s)
	}
	tr := Plan{Factors: []Factor{{Name: "t", Levels: []string{"A", "B"}}}}.Treatments()
	f.Fuzz(func(t *testing.T, s string) {
		reps, err := ParseReps(s, tr, "A")
		if err != nil {
			return
		}
		for _, r := range reps {
			if r < 1 {
				t.Fatalf("%q gave replication %d", s, r)
			}
		}
	})
}

func FuzzParseSpec(f *testing.F) {
	f.Add([]byte("title = \"x\"\nfactor = [\"a=1,2\"]\nseed = 3\n"))
	f.Add([]byte("design = \"rcbd\"\nblocks = 2\nfactor = [\"a=1,2\", \"b=x,y\"]\nreps = \"2\"\nseed = 1\ngrid = \"2x2\"\n"))
	f.Add([]byte("= broken"))
	f.Fuzz(func(t *testing.T, b []byte) {
		s, err := ParseSpec("fuzz.toml", b)
		if err != nil {
			return
		}
		p, err := s.Resolve(nil)
		if err != nil {
			return
		}
		// A resolved plan round-trips through its canonical JSON.
		q, err := ParsePlan(p.Canonical())
		if err != nil || q.Fingerprint() != p.Fingerprint() {
			t.Fatalf("canonical round trip failed: %v", err)
		}
	})
}

func FuzzReadUnitList(f *testing.F) {
	f.Add("id,litter,w\n1,a,2\n2,a,3\n")
	f.Add("id\n\"unterminated\n")
	f.Fuzz(func(t *testing.T, s string) {
		rows, err := ReadUnitList(strings.NewReader(s), "fuzz.csv", "id", "", "")
		if err != nil {
			return
		}
		seen := map[string]bool{}
		for _, r := range rows {
			if r.ID == "" || seen[r.ID] {
				t.Fatalf("empty or duplicate ID accepted: %q", r.ID)
			}
			seen[r.ID] = true
		}
	})
}

// Factor and response syntax round-trips: what parses prints back to text
// that parses to the same value.
func FuzzParseFactor(f *testing.F) {
	for _, s := range []string{"feed=A,B,C", "dose=0,10,30", "x=", "=a,b", "a=b=c,d"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fa, err := ParseFactor(s)
		if err != nil {
			return
		}
		again, err := ParseFactor(fa.Name + "=" + strings.Join(fa.Levels, ","))
		if err != nil || again.Name != fa.Name || strings.Join(again.Levels, "\x00") != strings.Join(fa.Levels, "\x00") {
			// Allowed exception: a level containing a comma cannot come from
			// this syntax, so every parsed level is comma-free and the
			// round trip must hold.
			t.Fatalf("%q: round trip gave %+v (%v)", s, again, err)
		}
	})
}

func FuzzParseResponse(f *testing.F) {
	for _, s := range []string{"height_cm", "h:0..200", "w:..5", "x:1..", "y:a..b", ":1..2"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		r, err := ParseResponse(s)
		if err != nil {
			return
		}
		if r.Min != nil && r.Max != nil && *r.Min > *r.Max {
			t.Fatalf("%q: empty range accepted", s)
		}
	})
}

func TestRepsNameTheControl(t *testing.T) {
	p, err := Spec{Factor: []string{"diet=chow,fat,fibre"}, Control: "chow", Reps: "control=8,default=6", Seed: u64(1)}.Resolve(nil)
	if err != nil || p.Reps[0] != 8 || p.Reps[1] != 6 || p.Reps[2] != 6 {
		t.Fatalf("%v %v", p.Reps, err)
	}
	if _, err := (Spec{Factor: []string{"diet=chow,fat"}, Reps: "control=8,default=6", Seed: u64(1)}).Resolve(nil); err == nil {
		t.Error("control accepted without a control level")
	}
}

func TestUnitListCRDSharesEqually(t *testing.T) {
	rows := []UnitRow{{ID: "a"}, {ID: "b"}, {ID: "c"}, {ID: "d"}, {ID: "e"}, {ID: "f"}}
	p, err := Spec{Factor: []string{"diet=x,y,z"}, Seed: u64(1)}.Resolve(rows)
	if err != nil || p.Reps[0] != 2 || p.NumUnits() != 6 {
		t.Fatalf("%+v %v", p.Reps, err)
	}
	_, err = Spec{Factor: []string{"diet=x,y,z,w"}, Seed: u64(1)}.Resolve(rows)
	if err == nil || !strings.Contains(err.Error(), "6 units do not divide equally among 4 treatments") {
		t.Errorf("got %v", err)
	}
}

// TestAbsurdPlansRefused: plan JSON that would build an absurd design is
// refused by its limit, before anything is allocated.
func TestAbsurdPlansRefused(t *testing.T) {
	levels := func(n int) []string {
		out := make([]string, n)
		for i := range out {
			out[i] = strings.Repeat("l", 1) + strconv.Itoa(i)
		}
		return out
	}
	fs := []Factor{{Name: "a", Levels: levels(100)}, {Name: "b", Levels: levels(100)}, {Name: "c", Levels: levels(100)}, {Name: "d", Levels: levels(100)}}
	tests := []struct {
		name  string
		plan  Plan
		field string
	}{
		{"4 factors of 100 levels", Plan{Design: RCBD, Factors: fs, Blocks: 2, BlockName: "b"}, "factor"},
		{"10^5 blind treatments", Plan{Design: CRD, Factors: []Factor{{Name: "a", Levels: levels(1000)}, {Name: "b", Levels: levels(100)}}, Blocks: 1, BlockName: "b", Blind: true, BlindMode: BlindUnit}, "factor"},
		{"10^12 blocks", Plan{Design: RCBD, Factors: fs[:1], Reps: ones(100), Blocks: 1e12, BlockName: "b"}, "blocks"},
		{"huge grid", Plan{Design: CRD, Factors: fs[:1], Reps: ones(100), Blocks: 1, BlockName: "b", Grid: &Grid{Rows: 1e9, Cols: 1e9, Numbering: RowWise}}, "grid"},
		{"huge reps", Plan{Design: CRD, Factors: fs[:1], Reps: append(ones(99), 1e15), Blocks: 1, BlockName: "b"}, "reps"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			b, _ := json.Marshal(tt.plan)
			_, err := ParsePlan(b)
			var e *Error
			if !errors.As(err, &e) || e.Field != tt.field {
				t.Errorf("got %v, want a %s error", err, tt.field)
			}
		})
	}
}

func ones(n int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = 1
	}
	return out
}

func TestUnequalBlocksAndNaming(t *testing.T) {
	rows := func(sizes ...int) []UnitRow {
		var out []UnitRow
		for b, n := range sizes {
			for i := 0; i < n; i++ {
				out = append(out, UnitRow{ID: fmt.Sprintf("%d-%d", b, i), Block: fmt.Sprintf("L%d", b+1)})
			}
		}
		return out
	}
	base := Spec{Factor: []string{"dose=0,1,2,3,4"}, BlockColumn: "litter", BlockName: "litter", Seed: u64(1)}
	if _, err := base.Resolve(rows(5, 8, 6, 7)); err == nil || !strings.Contains(err.Error(), "--per-block 5") {
		t.Errorf("litters of 5-8 for 5 treatments: %v", err)
	}
	cases := []struct {
		edit  func(*Spec)
		sizes []int
		name  string
		n     int
	}{
		{func(s *Spec) { s.PerBlock = 5 }, []int{5, 8, 6, 7}, "randomised complete block design", 20},
		{func(s *Spec) { s.PerBlock = 10 }, []int{10, 12, 11}, "generalised randomised block design", 30},
		{func(s *Spec) { s.AllowUnequal = true }, []int{5, 8, 6, 7}, "randomised block design with unequal blocks", 26},
		{func(s *Spec) {}, []int{10, 10}, "generalised randomised block design", 20},
		{func(s *Spec) {}, []int{5, 5, 5}, "randomised complete block design", 15},
	}
	for _, c := range cases {
		s := base
		c.edit(&s)
		p, err := s.Resolve(rows(c.sizes...))
		if err != nil {
			t.Fatalf("%v: %v", c.sizes, err)
		}
		if p.DesignName() != c.name || p.NumUnits() != c.n {
			t.Errorf("%v: %q with %d units, want %q with %d", c.sizes, p.DesignName(), p.NumUnits(), c.name, c.n)
		}
	}
}

// FuzzParseKey: a key file never panics the parser, and whatever it
// accepts marshals and parses again to the same key.
func FuzzParseKey(f *testing.F) {
	f.Add([]byte(`{"format":"allot-key-1","plan_fingerprint":"ab","seed":1,"treatments":["a"],"codes":["X"]}`))
	f.Add([]byte(`{"format":"allot-key-2","plan_fingerprint":"ab","seed":1,"blind_mode":"unit","secret":"00112233445566778899aabbccddeeff","treatments":["a"],"mac":"00"}`))
	f.Fuzz(func(t *testing.T, b []byte) {
		k, err := ParseKey(b)
		if err != nil {
			return
		}
		again, _ := json.Marshal(k)
		k2, err := ParseKey(again)
		if err != nil || k2.Digest() != k.Digest() {
			t.Fatalf("accepted key does not round-trip: %v", err)
		}
	})
}

// FuzzDecodeLayout: a layout file never panics the decoder or Check.
func FuzzDecodeLayout(f *testing.F) {
	p, _ := Spec{Factor: []string{"feed=A,B"}, Reps: "2", Seed: u64(1)}.Resolve(nil)
	doc, _ := json.Marshal(LayoutDoc{Format: LayoutFormat, Fingerprint: p.Fingerprint(), Layout: Layout{Plan: p, Units: []Unit{{ID: "1", Block: 1, Position: 1}}}})
	f.Add(doc)
	f.Fuzz(func(t *testing.T, b []byte) {
		if l, err := DecodeLayout(b); err == nil {
			_ = l.Check()
		}
	})
}

func TestDesignNameEqualBlocksWithRemainder(t *testing.T) {
	var rows []UnitRow
	for i := 0; i < 16; i++ {
		rows = append(rows, UnitRow{ID: strconv.Itoa(i), Block: strconv.Itoa(i / 8)})
	}
	p, err := Spec{Factor: []string{"dose=5"}, BlockColumn: "litter", PerBlock: 7, Seed: u64(1)}.Resolve(rows)
	if err != nil || p.DesignName() != "randomised block design with unequal replication within blocks" {
		t.Errorf("%v %q", err, p.DesignName())
	}
}
