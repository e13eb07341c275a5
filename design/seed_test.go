package design

import (
	"encoding/json"
	"strconv"
	"strings"
	"testing"
)

func TestParseSeed(t *testing.T) {
	tests := []struct {
		in   string
		want uint64
		ok   bool
	}{
		{"0", 0, true},
		{" 20261201 ", 20261201, true},
		{"9223372036854775808", 1 << 63, true},
		{"18446744073709551615", 18446744073709551615, true},
		{"18446744073709551616", 0, false}, // 2^64
		{"-1", 0, false},
		{"+5", 0, false},
		{"1e6", 0, false},
		{"0x10", 0, false},
		{"", 0, false},
	}
	for _, tt := range tests {
		got, err := ParseSeed(tt.in)
		if (err == nil) != tt.ok || got != tt.want {
			t.Errorf("ParseSeed(%q) = %d, %v; want %d, ok %v", tt.in, got, err, tt.want, tt.ok)
		}
	}
}

func TestSeedTextJSON(t *testing.T) {
	b, err := json.Marshal(struct {
		Seed SeedText `json:"seed"`
	}{18446744073709551615})
	if err != nil || string(b) != `{"seed":"18446744073709551615"}` {
		t.Fatalf("%s %v", b, err)
	}
	for _, doc := range []string{`{"seed":"18446744073709551615"}`, `{"seed":18446744073709551615}`} {
		var v struct {
			Seed SeedText `json:"seed"`
		}
		if err := json.Unmarshal([]byte(doc), &v); err != nil || v.Seed != 18446744073709551615 {
			t.Errorf("%s: %d %v", doc, v.Seed, err)
		}
	}
	var v struct {
		Seed SeedText `json:"seed"`
	}
	if err := json.Unmarshal([]byte(`{"seed":-3}`), &v); err == nil {
		t.Error("a negative seed accepted")
	}
}

func TestSpecSeedForms(t *testing.T) {
	for _, tt := range []struct {
		toml string
		want uint64
	}{
		{`seed = 42`, 42},
		{`seed = "18446744073709551615"`, 18446744073709551615},
	} {
		sp, err := ParseSpec("s.toml", []byte("factor = [\"feed=A,B\"]\n"+tt.toml+"\n"))
		if err != nil || sp.Seed == nil || uint64(*sp.Seed) != tt.want {
			t.Errorf("%s: %v %v", tt.toml, sp.Seed, err)
		}
	}
	for _, bad := range []string{`seed = -1`, `seed = "x"`, `seed = 1.5`} {
		if _, err := ParseSpec("s.toml", []byte(bad+"\n")); err == nil {
			t.Errorf("%s accepted", bad)
		}
	}
}

// TestLayoutDocumentRoundTrip: a layout written with its seed as a string
// reads back, and so does a file of an older allot with a numeric seed.
func TestLayoutDocumentRoundTrip(t *testing.T) {
	seed := SeedText(1<<63 + 12345)
	sp := Spec{Factor: []string{"feed=A,B"}, Reps: "1", Seed: &seed}
	p, err := sp.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	l := Layout{Plan: p, Units: []Unit{{ID: "101", Block: 1, Position: 1, Treatment: 0}, {ID: "102", Block: 1, Position: 2, Treatment: 1}}}
	b, err := json.Marshal(LayoutDocument(l))
	if err != nil {
		t.Fatal(err)
	}
	want := `"seed":"` + strconv.FormatUint(uint64(seed), 10) + `"`
	if !strings.Contains(string(b), want) {
		t.Fatalf("no %s in %s", want, b)
	}
	for _, doc := range []string{string(b), strings.Replace(string(b), want, `"seed":`+strconv.FormatUint(uint64(seed), 10), 1)} {
		got, err := DecodeLayout([]byte(doc))
		if err != nil || got.Plan.Seed != uint64(seed) || len(got.Units) != 2 {
			t.Errorf("%v %+v", err, got.Plan)
		}
	}
}

func FuzzParseSeed(f *testing.F) {
	for _, s := range []string{"0", "18446744073709551615", "-1", " 7 ", "1e3"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := ParseSeed(s)
		if err != nil {
			return
		}
		// Whatever is accepted is the decimal text of the value, up to
		// surrounding spaces and leading zeros.
		if got, _ := strconv.ParseUint(strings.TrimSpace(s), 10, 64); got != v {
			t.Fatalf("ParseSeed(%q) = %d", s, v)
		}
		var back SeedText
		b, _ := SeedText(v).MarshalJSON()
		if err := back.UnmarshalJSON(b); err != nil || uint64(back) != v {
			t.Fatalf("round trip of %d: %s %v", v, b, err)
		}
	})
}

func TestParseFactorOrCount(t *testing.T) {
	tests := []struct {
		in     string
		levels string // joined with ",", or "" for an error
		errHas string
	}{
		{"dose=3", "1,2,3", ""},
		{" diet = chow, fat ", "chow,fat", ""},
		{"dose=1", "", "needs at least 2 levels"},
		{"dose=0", "", "needs at least 2 levels"},
		{"dose", "", "write NAME=LEVELS"},
		{"=3", "", "write NAME=LEVELS"},
		{"diet=chow,chow", "", "distinct"},
		{"diet=chow,", "", "distinct"},
	}
	for _, tt := range tests {
		f, err := ParseFactorOrCount(tt.in)
		switch {
		case tt.levels != "" && (err != nil || strings.Join(f.Levels, ",") != tt.levels):
			t.Errorf("%q: %v %v", tt.in, f, err)
		case tt.levels == "" && (err == nil || !strings.Contains(err.Error(), tt.errHas)):
			t.Errorf("%q: error %v, want %q", tt.in, err, tt.errHas)
		}
	}
}

func FuzzParseFactorOrCount(f *testing.F) {
	for _, s := range []string{"dose=3", "diet=chow,fat", "a=", "=", "x=99999"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if strings.Contains(s, "=") {
			// A huge count would allocate its level names: bound it.
			_, v, _ := strings.Cut(s, "=")
			if k, err := strconv.Atoi(strings.TrimSpace(v)); err == nil && k > 10000 {
				return
			}
		}
		fa, err := ParseFactorOrCount(s)
		if err != nil {
			return
		}
		// Accepted: at least two distinct non-empty levels, and the names
		// parse back to the same factor.
		again, err := ParseFactorOrCount(fa.Name + "=" + strings.Join(fa.Levels, ","))
		if err != nil || strings.Join(again.Levels, ",") != strings.Join(fa.Levels, ",") {
			t.Fatalf("%q: %v then %v %v", s, fa, again, err)
		}
	})
}
