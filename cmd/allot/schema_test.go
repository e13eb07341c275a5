package main

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/santhosh-tekuri/jsonschema/v6"
)

// schemaDir holds the JSON Schemas of allot's documents.
const schemaDir = "../../schema"

func compileSchema(t *testing.T, kind string) *jsonschema.Schema {
	t.Helper()
	sch, err := jsonschema.NewCompiler().Compile(filepath.Join(schemaDir, kind+".v1.json"))
	if err != nil {
		t.Fatalf("schema %s: %v", kind, err)
	}
	return sch
}

func validateJSON(t *testing.T, sch *jsonschema.Schema, doc string) error {
	t.Helper()
	v, err := jsonschema.UnmarshalJSON(strings.NewReader(doc))
	if err != nil {
		t.Fatalf("not JSON: %v\n%.300s", err, doc)
	}
	return sch.Validate(v)
}

// TestSchemasMatchOutput validates each kind of JSON document, as the
// commands print it, against its schema in schema/.
func TestSchemasMatchOutput(t *testing.T) {
	fx := newExitFixture(t)
	tests := []struct {
		kind string
		args []string
	}{
		{"size", []string{"size", "--groups", "4", "--f", "0.25", "--json"}},
		{"size", []string{"size", "--d", "0.8", "--n", "20", "--json"}},
		{"size", []string{"size", "--factor", "dose=3", "--factor", "diet=chow,fat", "--term", "dose,diet", "--f", "0.3", "--design", "rcbd", "--json"}},
		{"size", []string{"size", "--proportions", "0.5,0.7", "--trials", "10", "--json"}},
		{"size", []string{"size", "--design", "latin", "--means", "20,21,23", "--sd", "1", "--squares", "2", "--json"}},
		{"simulation", []string{"size", "--groups", "3", "--means", "10,12,14", "--sd", "3", "--n", "8", "--simulate", "--sims", "50", "--seed", "18446744073709551615", "--json"}},
		{"layout", []string{"layout", "--factor", "feed=A,B,C", "--design", "rcbd", "--blocks", "2", "--seed", "18446744073709551615", "--json"}},
		{"layout", []string{"layout", "--factor", "feed=A,B", "--factor", "dose=0,1", "--reps", "1", "--blocks", "2", "--grid", "2x2", "--order", "--seed", "3", "--json"}},
		{"check", []string{"check", fx.filled, "--json"}},
		{"check", []string{"check", fx.broken, "--json"}},
		{"analysis", []string{"analyze", fx.filled, "--json"}},
		{"analysis", []string{"analyze", fx.filled, "--posthoc", "dunnett", "--control", "F0", "--json"}},
	}
	schemas := map[string]*jsonschema.Schema{}
	for _, tt := range tests {
		t.Run(strings.Join(tt.args, " "), func(t *testing.T) {
			sch := schemas[tt.kind]
			if sch == nil {
				sch = compileSchema(t, tt.kind)
				schemas[tt.kind] = sch
			}
			code, out, errs := runArgs(t, tt.args...)
			if code != exitOK && code != exitFailed {
				t.Fatalf("exit %d: %s", code, errs)
			}
			if err := validateJSON(t, sch, out); err != nil {
				t.Errorf("%s output does not match schema/%s.v1.json: %v", tt.kind, tt.kind, err)
			}
		})
	}
}

// TestSchemasRefuse: each schema rejects a document without its core keys
// or with a wrong format, so the validation above can fail.
func TestSchemasRefuse(t *testing.T) {
	for _, tt := range []struct{ kind, doc string }{
		{"size", `{"method": "exact noncentral F"}`},
		{"layout", `{"fingerprint": "00", "plan": {}, "units": []}`},
		{"check", `{"file": "x.xlsx", "errors": 0}`},
		{"analysis", `{"anova": {"response": "y"}}`},
		{"analysis", `{"format": "allot.analysis/v1", "responses": [{"response": "y", "anova": {}}]}`},
		{"simulation", `{"design": "crd", "seed": -1}`},
		{"layout", `{"format": "allot.size/v1"}`},
	} {
		if err := validateJSON(t, compileSchema(t, tt.kind), tt.doc); err == nil {
			t.Errorf("schema %s accepts %s", tt.kind, tt.doc)
		}
	}
}

// TestStrataSchemaMatchesOutput validates the split-plot and Latin-square
// analysis documents (balanced, with sub-plots missing, Latin) against
// schema/strata-analysis.v1.json, and checks the schema refuses documents
// without their core keys.
func TestStrataSchemaMatchesOutput(t *testing.T) {
	sch := compileSchema(t, "strata-analysis")
	dir := t.TempDir()
	wb := filepath.Join(dir, "split.xlsx")
	if code, _, errs := runArgs(t, "layout", "--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=V1,V2,V3",
		"--blocks", "3", "--block-name", "room", "--response", "dry_g", "--seed", "5", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	latin := filepath.Join(dir, "latin.xlsx")
	if code, _, errs := runArgs(t, "layout", "--design", "latin", "--factor", "feed=A,B,C,D", "--response", "gain", "--seed", "7", "-o", latin); code != 0 {
		t.Fatal(errs)
	}
	for _, tc := range []struct {
		name, src string
		n, lost   int
	}{{"split plot", wb, 18, 0}, {"split plot, two lost", wb, 18, 2}, {"Latin square", latin, 16, 0}} {
		vals := make([]float64, tc.n)
		for i := range vals {
			vals[i] = 10 + float64(i%5) + 0.3*float64((i*7)%4)
		}
		for k := 0; k < tc.lost; k++ {
			vals[4+7*k] = math.NaN()
		}
		filled := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_")+".xlsx")
		if err := workbookFill(tc.src, filled, vals); err != nil {
			t.Fatal(err)
		}
		code, out, errs := runArgs(t, "analyze", filled, "--json")
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", tc.name, code, errs)
		}
		if err := validateJSON(t, sch, out); err != nil {
			t.Errorf("%s: output does not match schema/strata-analysis.v1.json: %v", tc.name, err)
		}
	}
	for _, doc := range []string{
		`{"format": "allot.analysis/v1", "responses": [{}]}`,
		`{"format": "allot.strata-analysis/v1", "responses": []}`,
		`{"format": "allot.strata-analysis/v1", "responses": [{"response": "y", "design": "d", "method": "m", "alpha": 0.05, "missing": 0, "cautions": ["c"]}]}`,
	} {
		if err := validateJSON(t, sch, doc); err == nil {
			t.Errorf("schema strata-analysis accepts %s", doc)
		}
	}
}
