package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/power"
)

var update = flag.Bool("update", false, "rewrite golden files")

func golden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./cmd/allot -update to create it)", err)
	}
	if got != string(want) {
		t.Errorf("output differs from %s:\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

func TestSizeParse(t *testing.T) {
	tests := []struct {
		name  string
		args  []string
		check func(*testing.T, *sizeOptions)
	}{
		{"one-way", []string{"--groups", "4", "--f", "0.25", "--power", "0.9"}, func(t *testing.T, o *sizeOptions) {
			if o.req.Groups != 4 || o.req.F != 0.25 || o.req.Power != 0.9 || o.req.Alpha != 0.05 || o.req.Test != power.TestF {
				t.Errorf("%+v", o.req)
			}
		}},
		{"factorial", []string{"--factor", "dose=3", "--factor", "diet=chow,fat", "--term", "dose,diet", "--eta2", "0.06"}, func(t *testing.T, o *sizeOptions) {
			if len(o.req.Factors) != 2 || o.req.Factors[1].Levels != 2 || len(o.req.Term) != 2 || o.req.Term[1] != "diet" {
				t.Errorf("%+v", o.req)
			}
		}},
		{"blocks", []string{"--groups", "5", "--f", "0.6", "--blocks", "6"}, func(t *testing.T, o *sizeOptions) {
			if !o.req.Blocked || o.req.N != 6 {
				t.Errorf("%+v", o.req)
			}
		}},
		{"t test", []string{"--d", "0.5", "--sides", "1", "--means", "1,2", "--ratios", "1,2"}, func(t *testing.T, o *sizeOptions) {
			if o.req.Test != power.TestT || o.req.Sides != 1 || len(o.req.Means) != 2 || o.req.Ratios[1] != 2 {
				t.Errorf("%+v", o.req)
			}
		}},
		{"comparisons", []string{"--groups", "4", "--compare", "control", "--diff", "3", "--sd", "2"}, func(t *testing.T, o *sizeOptions) {
			if o.req.Test != power.TestControl || o.req.Diff != 3 {
				t.Errorf("%+v", o.req)
			}
		}},
		{"justification", []string{"--levels", "veh,low", "--control", "veh", "--diff", "10", "--sd", "8", "--response", "weight", "--unit", "mg",
			"--sd-source", "pilot", "--subjects", "animals", "--block-name", "litter", "--effect-reason", "matters", "--direction", "lower", "-o", "s.json"}, func(t *testing.T, o *sizeOptions) {
			st := o.study
			if len(o.req.Levels) != 2 || o.req.ControlName != "veh" || st.Response != "weight" || st.Unit != "mg" || st.SDSource != "pilot" ||
				st.Subjects != "animals" || st.BlockName != "litter" || st.EffectReason != "matters" || o.req.Direction != "lower" ||
				o.req.Sides != 0 || o.req.Test != power.TestT || o.out != "s.json" {
				t.Errorf("%+v %+v", o.req, st)
			}
		}},
		{"explicit zero", []string{"--groups", "3", "--f", "0.3", "--alpha", "0.01"}, func(t *testing.T, o *sizeOptions) {
			if !o.req.Explicit["alpha"] || o.req.Explicit["power"] {
				t.Errorf("explicit %v", o.req.Explicit)
			}
		}},
		{"tukey and resource", []string{"--groups", "4", "--compare", "pairs", "--resource"}, func(t *testing.T, o *sizeOptions) {
			if o.req.Test != power.TestAllPairs || !o.resource {
				t.Errorf("%+v", o.req)
			}
		}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got *sizeOptions
			cmd := newSizeCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *sizeOptions) error { got = o; return nil })
			cmd.SetArgs(tt.args)
			if err := cmd.Execute(); err != nil {
				t.Fatal(err)
			}
			tt.check(t, got)
		})
	}
}

func TestSizeRun(t *testing.T) {
	tests := []struct {
		name string
		args []string
	}{
		{"size_oneway", []string{"size", "--groups", "3", "--f", "0.4"}},
		{"size_pilot_justify", []string{"size", "--means", "12,15,15,18", "--sd", "3", "--pilot-n", "8", "--dropout", "0.15", "--justify"}},
		{"size_covariate", []string{"size", "--groups", "3", "--means", "30,33,35", "--sd", "4", "--covariate-r", "0.6", "--subjects", "animals", "--justify"}},
		{"size_proportions", []string{"size", "--proportions", "0.6,0.75", "--trials", "50", "--levels", "peat,coir", "--dropout", "0.1"}},
		{"size_counts_json", []string{"size", "--counts", "4,6,5", "--n", "10", "--json"}},
		{"size_latin", []string{"size", "--design", "latin", "--means", "10,11,12,13", "--sd", "1.5", "--power", "0.9"}},
		{"size_latin_squares_json", []string{"size", "--design", "latin", "--means", "20,21,23", "--sd", "1", "--squares", "2", "--json"}},
		{"size_counts_simulate", []string{"size", "--counts", "4,6", "--blocks", "6", "--simulate", "--block-sd", "0.3", "--overdispersion", "0.2", "--sims", "200", "--seed", "2", "--quiet"}},
		{"size_rcbd_power", []string{"size", "--design", "rcbd", "--groups", "5", "--f", "0.6", "--blocks", "6"}},
		{"size_ttest_detect", []string{"size", "--groups", "2", "--sides", "1", "--n", "10", "--detect", "--sd", "4"}},
		{"size_factorial_json", []string{"size", "--factor", "dose=3", "--factor", "diet=chow,fat", "--term", "dose,diet", "--f", "0.3", "--json"}},
		{"size_compare", []string{"size", "--groups", "4", "--compare", "control", "--diff", "3", "--sd", "2", "--ratios", "2,1,1,1"}},
		// The ethics-form example: a difference of 10 mg, SD 8 mg from a pilot of 8 animals, litters as blocks.
		{"size_justify_animals", []string{"size", "--design", "rcbd", "--block-name", "litter", "--subjects", "animals", "--levels", "vehicle,dosed",
			"--control", "vehicle", "--diff", "10", "--sd", "8", "--sd-source", "pilot, 8 animals", "--unit", "mg", "--response", "liver weight",
			"--effect-reason", "a 10 mg rise marks liver enlargement", "--dropout", "0.1", "--justify"}},
		{"size_justify_plants_json", []string{"size", "--factor", "feed=F0,F1,F2", "--subjects", "plants", "--means", "20,24,26", "--sd", "3",
			"--unit", "cm", "--response", "height", "--json", "--justify"}},
		{"size_factorial_term", []string{"size", "--factor", "A=2", "--factor", "B=2", "--term", "A,B", "--means", "10,10,10,14", "--sd", "2", "--n", "10"}},
		{"size_resource", []string{"size", "--groups", "4", "--design", "rcbd", "--block-name", "bench", "--subjects", "plants", "--resource"}},
		{"size_tukey", []string{"size", "--groups", "4", "--compare", "pairs", "--diff", "2", "--sd", "1.5"}},
		{"size_direction", []string{"size", "--groups", "3", "--compare", "dunnett", "--direction", "lower", "--diff", "2", "--sd", "1.5", "--alpha", "0.25"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runArgs(t, tt.args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			golden(t, tt.name, out)
		})
	}
}

func TestSizeJSONFields(t *testing.T) {
	_, out, _ := runArgs(t, "size", "--groups", "4", "--f", "0.25", "--dropout", "0.1", "--json")
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"n_per_group", "total_n", "total_with_dropout", "achieved_power", "df1", "df2", "noncentrality", "f", "alpha", "target_power", "method"} {
		if _, ok := m[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
}

func TestSizeBadInput(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--groups", "3", "--f", "0.25", "--alpha", "1.5"}, "--alpha 1.5: must be between 0 and 1"},
		{[]string{"--groups", "3", "--f", "0.25", "--power", "0.03"}, "--power 0.03: must be above alpha"},
		{[]string{"--groups", "3", "--f", "-0.2"}, "--f -0.2: must be greater than 0"},
		{[]string{"--groups", "3", "--diff", "2", "--sd", "0"}, "--diff: needs --sd"},
		{[]string{"--groups", "1", "--f", "0.3"}, "--groups 1: need at least 2 groups"},
		{[]string{"--groups", "3", "--means", "1,2", "--sd", "1"}, "--means 1, 2: 2 means for 3 groups"},
		{[]string{"--groups", "3", "--f", "0.3", "--dropout", "1"}, "--dropout 1: must be a fraction"},
		{[]string{"--factor", "a=2", "--factor", "b=3", "--term", "c", "--f", "0.3"}, `unknown factor "c"`},
		{[]string{"--groups", "3", "--f", "0.00001"}, "--f 1e-05: the effect is too small"},
		{[]string{"--groups", "3", "--means", "1,x,3", "--sd", "1"}, `--means 1,x,3: "x" is not a number`},
		{[]string{"--factor", "dose", "--f", "0.3"}, "--factor dose: write NAME=LEVELS"},
		{[]string{"--factor", "dose=1", "--f", "0.3"}, `factor "dose" needs at least 2 levels`},
		{[]string{"--design", "square", "--groups", "3", "--f", "0.3"}, "--design square: must be crd"},
		{[]string{"--groups", "3", "--f", "0.3", "--curve", "x.pdf"}, "--curve x.pdf: the file name must end in .svg or .png"},
		{[]string{"--proportions", "0.5,0.7"}, "--trials 0: give the trials per unit"},
		{[]string{"--proportions", "0.5,1.2", "--trials", "10"}, "--proportions: proportion 1.2: must be strictly between 0 and 1"},
		{[]string{"--proportions", "0.5,0.7", "--trials", "10", "--f", "0.3"}, "--f goes with a measured response"},
		{[]string{"--counts", "3,3"}, "all equal: there is no effect to detect"},
		{[]string{"--counts", "3,4", "--blocks", "4"}, "need --simulate"},
		{[]string{"--design", "latin", "--means", "1,2", "--sd", "1"}, "at least 3 treatments"},
		{[]string{"--design", "latin", "--means", "1,2,3", "--sd", "1", "--f", "0.3"}, "--f is not available with --design latin"},
		{[]string{"--counts", "3,4", "--proportions", "0.2,0.3"}, "give one"},
		{[]string{"--groups", "3", "--f", "0.3", "--covariate-r", "1"}, "--covariate-r 1: the correlation must be strictly between -1 and 1"},
		// Explicit zeros are refused, not replaced by the default.
		{[]string{"--groups", "3", "--f", "0.3", "--alpha", "0"}, "--alpha 0: must be between 0 and 1"},
		{[]string{"--groups", "3", "--f", "0.3", "--power", "0"}, "--power 0: must be above alpha"},
		{[]string{"--groups", "3", "--f", "0.3", "--n", "0"}, "--n 0: must be at least 2"},
		{[]string{"--groups", "3", "--f", "0.3", "--sides", "0"}, "--sides 0: must be 1 or 2"},
		{[]string{"--groups", "3", "--f", "0.3", "--sd", "1", "--pilot-n", "5", "--pilot-conf", "0"}, "--pilot-conf 0: must be between 0 and 1"},
		{[]string{"--groups", "1000000000", "--f", "0.3"}, "--groups 1000000000: at most 1000 groups"},
		{[]string{"--groups", "3", "--f", "NaN"}, "--f NaN: must be a finite number"},
		{[]string{"--groups", "3", "--f", "1e300"}, "noncentrality overflows"},
		{[]string{"--means", "1,NaN", "--sd", "1"}, "every mean must be a finite number"},
		{[]string{"--simulate", "--design", "rcbd", "--means", "1,2", "--sd", "1", "--block-sd", "Inf", "--seed", "1"}, "--block-sd +Inf: must be a finite number"},
		{[]string{"--groups", "3", "--f", "0.3", "--subjects", "mice"}, "--subjects mice: must be animals, plants or units"},
		{[]string{"--groups", "3", "--compare", "pairs", "--diff", "1", "--sd", "1", "--sides", "1"}, "comparisons of all pairs are two-sided"},
		{[]string{"--groups", "3", "--f", "0.3", "--direction", "up"}, "--direction up: must be lower or higher"},
		{[]string{"--levels", "a,b", "--groups", "3", "--f", "0.3"}, "--levels a,b: 2 names for 3 groups"},
		{[]string{"--levels", "a,b,c", "--compare", "control", "--control", "d", "--diff", "1", "--sd", "1"}, `--control d: is not one of the levels a, b, c`},
		{[]string{"--factor", "A=2", "--factor", "B=2", "--term", "A,B", "--means", "10,10,14"}, "3 means for 4 treatment cells"},
		{[]string{"--groups", "3", "--resource", "--justify"}, "--resource: the resource equation gives a range"},
	}
	for _, tt := range tests {
		t.Run(strings.Join(tt.args, " "), func(t *testing.T) {
			code, out, errs := runArgs(t, append([]string{"size"}, tt.args...)...)
			if code != exitUsage || out != "" || !strings.Contains(errs, tt.want) {
				t.Errorf("exit %d, stdout %q, stderr %q; want exit 2 and %q", code, out, errs, tt.want)
			}
		})
	}
}

func TestSizeCurve(t *testing.T) {
	dir := t.TempDir()
	for _, ext := range []string{"svg", "png"} {
		p := filepath.Join(dir, "curve."+ext)
		code, _, errs := runArgs(t, "size", "--groups", "4", "--f", "0.3", "--curve", p)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
		if st, err := os.Stat(p); err != nil || st.Size() < 2000 {
			t.Errorf("%s: %v", p, err)
		}
		// A second run does not replace the file without --force.
		code, _, errs = runArgs(t, "size", "--groups", "4", "--f", "0.3", "--curve", p)
		if code != exitUsage || !strings.Contains(errs, "--force") {
			t.Errorf("second run: exit %d, %s", code, errs)
		}
	}
}

func TestSizeSimulate(t *testing.T) {
	code, out, errs := runArgs(t, "size", "--simulate", "--design", "rcbd", "--means", "10,11,12,13", "--sds", "1.5,1.5,2,2.5",
		"--block-sd", "1", "--dropout", "0.1", "--blocks", "6", "--seed", "7", "--sims", "400", "--workers", "2")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	golden(t, "size_simulate", out)
	// The same seed with one worker prints the same.
	_, out1, _ := runArgs(t, "size", "--simulate", "--design", "rcbd", "--means", "10,11,12,13", "--sds", "1.5,1.5,2,2.5",
		"--block-sd", "1", "--dropout", "0.1", "--blocks", "6", "--seed", "7", "--sims", "400", "--workers", "1")
	if out1 != out {
		t.Error("1 and 2 workers differ")
	}
	code, out, errs = runArgs(t, "size", "--simulate", "--means", "10,11,12,13", "--sd", "1.6", "--seed", "3", "--sims", "300", "--posthoc", "dunnett", "--json")
	if code != 0 || !strings.Contains(out, `"any_pair"`) || !strings.Contains(out, `"tried"`) {
		t.Errorf("solve by simulation: exit %d %s\n%s", code, errs, out)
	}
	for _, tt := range []struct {
		args []string
		want string
	}{
		{[]string{"--simulate", "--groups", "3", "--f", "0.3"}, "--simulate: give the expected --means"},
		{[]string{"--simulate", "--means", "1,2,3", "--sd", "1", "--sims", "0"}, "--sims 0: give at least 1"},
		{[]string{"--simulate", "--means", "1,2,3", "--sds", "1,0,1"}, "every SD must be greater than 0"},
		{[]string{"--simulate", "--means", "1,2,3", "--sd", "1", "--block-sd", "2"}, "block effects need --design rcbd"},
		{[]string{"--simulate", "--means", "1,2,3", "--sd", "1", "--posthoc", "holm"}, "--posthoc holm: simulate tukey or dunnett"},
	} {
		code, _, errs := runArgs(t, append([]string{"size"}, tt.args...)...)
		if code != exitUsage || !strings.Contains(errs, tt.want) {
			t.Errorf("%v: exit %d %q; want %q", tt.args, code, errs, tt.want)
		}
	}
}

// -o writes the answer with its plan fragment; layout --from lays it out
// with the justified N and says so.
func TestSizeToLayout(t *testing.T) {
	dir := t.TempDir()
	sizeFile := filepath.Join(dir, "size.json")
	code, _, errs := runArgs(t, "size", "--levels", "vehicle,low,high", "--control", "vehicle", "--diff", "10", "--sd", "8", "--dropout", "0.1",
		"--design", "rcbd", "--block-name", "litter", "--response", "weight", "--unit", "g", "--subjects", "animals", "-o", sizeFile)
	if code != 0 {
		t.Fatalf("size: exit %d %s", code, errs)
	}
	code, _, errs = runArgs(t, "size", "--groups", "3", "--f", "0.4", "-o", sizeFile)
	if code != exitUsage || !strings.Contains(errs, "--force") {
		t.Errorf("second -o without --force: exit %d %s", code, errs)
	}
	var doc map[string]any
	b, _ := os.ReadFile(sizeFile)
	if err := json.Unmarshal(b, &doc); err != nil || doc["format"] != "allot.size/v1" || doc["plan"] == nil || doc["justification"] == nil {
		t.Fatalf("size.json: %v %v", err, doc["format"])
	}
	total := int(doc["total_with_dropout"].(float64))
	out := filepath.Join(dir, "layout.json")
	code, _, errs = runArgs(t, "layout", "--from", sizeFile, "--seed", "3", "-o", out)
	if code != 0 {
		t.Fatalf("layout --from: exit %d %s", code, errs)
	}
	if !strings.Contains(errs, fmt.Sprintf("%d units, as", total)) {
		t.Errorf("layout note: %s", errs)
	}
	lb, _ := os.ReadFile(out)
	var lay struct {
		Plan struct {
			Design    string                  `json:"design"`
			Blocks    int                     `json:"blocks"`
			BlockName string                  `json:"block_name"`
			Control   string                  `json:"control"`
			Responses []struct{ Name string } `json:"responses"`
		} `json:"plan"`
		Units []any `json:"units"`
	}
	if err := json.Unmarshal(lb, &lay); err != nil {
		t.Fatal(err)
	}
	if len(lay.Units) != total || lay.Plan.Design != "rcbd" || lay.Plan.BlockName != "litter" || lay.Plan.Control != "vehicle" ||
		len(lay.Plan.Responses) != 1 || lay.Plan.Responses[0].Name != "weight_g" {
		t.Errorf("layout from size.json: %d units (want %d), %+v", len(lay.Units), total, lay.Plan)
	}
	// A flag that changes the plan is reported.
	code, _, errs = runArgs(t, "layout", "--from", sizeFile, "--seed", "3", "--blocks", "4")
	if code != 0 || !strings.Contains(errs, "--blocks on the command line changed the plan") {
		t.Errorf("changed plan: exit %d %s", code, errs)
	}
	// The layout attached to a justification gives the allocation plan.
	code, just, errs := runArgs(t, "size", "--levels", "vehicle,low,high", "--control", "vehicle", "--diff", "10", "--sd", "8", "--dropout", "0.1",
		"--design", "rcbd", "--block-name", "litter", "--subjects", "animals", "--layout", out, "--justify")
	if code != 0 || !strings.Contains(just, "allocated to treatments at random") || !strings.Contains(just, "seed 3") {
		t.Errorf("justification with layout: exit %d %s\n%s", code, errs, just)
	}
}
