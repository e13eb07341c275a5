package main

import (
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
