package design

import (
	"strings"
	"testing"
)

func TestStrataSpec(t *testing.T) {
	seed := SeedText(1)
	base := func() Spec {
		return Spec{Design: "split-plot", Seed: &seed, WholePlot: []string{"light=low,high"}, SubPlot: []string{"variety=V1,V2,V3"}, Reps: "3", WholePlotName: "chamber", Response: []string{"y"}}
	}
	latin := func() Spec {
		return Spec{Design: "latin", Seed: &seed, Factor: []string{"feed=A,B,C,D"}, Response: []string{"y"}}
	}
	tests := []struct {
		name  string
		spec  Spec
		field string
		msg   string
	}{
		{"split crd", base(), "", ""},
		{"split blocks", func() Spec { s := base(); s.Blocks = 4; s.Reps = ""; return s }(), "", ""},
		{"split with factor", func() Spec { s := base(); s.Factor = []string{"x=a,b"}; return s }(), "factor", "--whole-plot"},
		{"no sub", func() Spec { s := base(); s.SubPlot = nil; return s }(), "sub_plot", "--sub-plot"},
		{"no whole", func() Spec { s := base(); s.WholePlot = nil; return s }(), "whole_plot", "--whole-plot"},
		{"crd one rep", func() Spec { s := base(); s.Reps = "1"; return s }(), "reps", "at least 2"},
		{"crd no reps", func() Spec { s := base(); s.Reps = ""; return s }(), "reps", "chambers per whole-plot"},
		{"bad reps", func() Spec { s := base(); s.Reps = "V1=2"; return s }(), "reps", "one whole number"},
		{"one block", func() Spec { s := base(); s.Blocks = 1; return s }(), "blocks", "2 or more"},
		{"blind", func() Spec { s := base(); s.Blind = BlindTreatment; return s }(), "blind", "--blind"},
		{"same names", func() Spec { s := base(); s.Blocks = 3; s.BlockName = "chamber"; return s }(), "whole_plot_name", "block name"},
		{"grid", func() Spec { s := base(); s.Grid = "2x3"; return s }(), "grid", "--grid"},
		{"squares on split", func() Spec { s := base(); s.Squares = 2; return s }(), "squares", "latin"},
		{"latin", latin(), "", ""},
		{"latin squares", func() Spec { s := latin(); s.Squares = 3; return s }(), "", ""},
		{"latin reps", func() Spec { s := latin(); s.Reps = "2"; return s }(), "reps", "--squares"},
		{"latin blocks", func() Spec { s := latin(); s.Blocks = 2; return s }(), "blocks", "--squares"},
		{"latin 2", func() Spec { s := latin(); s.Factor = []string{"feed=A,B"}; return s }(), "factor", "3 to 30"},
		{"latin whole", func() Spec { s := latin(); s.WholePlot = []string{"a=1,2"}; return s }(), "whole_plot", "split-plot"},
		{"rcbd with whole", Spec{Design: "rcbd", Seed: &seed, Factor: []string{"a=1,2"}, Blocks: 2, WholePlot: []string{"b=1,2"}}, "design", "split-plot"},
		{"units", func() Spec { s := base(); s.Units = "x.csv"; return s }(), "units", "--units"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p, err := tc.spec.Resolve(nil)
			if tc.field == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			e, ok := err.(*Error)
			if !ok || e.Field != tc.field || !strings.Contains(e.Msg, tc.msg) {
				t.Fatalf("got %v (%#v), want field %s containing %q; plan %+v", err, err, tc.field, tc.msg, p)
			}
		})
	}
}

func TestStrataPlanShape(t *testing.T) {
	seed := SeedText(5)
	p, err := Spec{Design: "split-plot", Seed: &seed, WholePlot: []string{"light=low,high", "co2=amb,high"}, SubPlot: []string{"variety=V1,V2,V3"}, Blocks: 3, Response: []string{"y"}}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if p.WholePlotTreatments() != 4 || p.SubPlotTreatments() != 3 || p.MainPlotsPerBlock() != 4 || p.NumUnits() != 36 || p.MainPlotWord() != "main plot" {
		t.Errorf("shape: %d whole, %d sub, %d main plots per block, %d units, %q", p.WholePlotTreatments(), p.SubPlotTreatments(), p.MainPlotsPerBlock(), p.NumUnits(), p.MainPlotWord())
	}
	if !strings.Contains(string(p.Canonical()), `"whole_plot_factors":2`) {
		t.Errorf("canonical JSON lacks the whole-plot factors: %s", p.Canonical())
	}
	if got := p.DesignName(); got != "split-plot design, main plots in randomised complete blocks" {
		t.Errorf("DesignName %q", got)
	}
	l, err := Spec{Design: "latin", Seed: &seed, Factor: []string{"feed=A,B,C,D,E"}, Squares: 2}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if l.Blocks != 2 || l.BlockName != "square" || l.NumUnits() != 50 || l.Grid.Rows != 5 || l.DesignName() != "series of 2 Latin squares" {
		t.Errorf("latin: %+v", l)
	}
	// Plans of the other kinds keep their canonical JSON: no new keys.
	c, err := Spec{Design: "rcbd", Seed: &seed, Factor: []string{"a=1,2"}, Blocks: 2}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if s := string(c.Canonical()); strings.Contains(s, "whole_plot") || strings.Contains(s, "main_plot") {
		t.Errorf("rcbd canonical JSON has split-plot keys: %s", s)
	}
}

func TestStrataSpecFile(t *testing.T) {
	sp, err := ParseSpec("trial.toml", []byte("design = \"split-plot\"\nwhole_plot = [\"diet=D1,D2\"]\nsub_plot = [\"sex=F,M\"]\nwhole_plot_name = \"cage\"\nreps = \"3\"\nseed = 4\n"))
	if err != nil {
		t.Fatal(err)
	}
	p, err := sp.Resolve(nil)
	if err != nil || p.WholePlotName != "cage" || p.WholePlotFactors != 1 || p.NumUnits() != 12 {
		t.Fatalf("%v %+v", err, p)
	}
	sp, err = ParseSpec("sq.toml", []byte("design = \"latin\"\nfactor = [\"feed=A,B,C\"]\nsquares = 2\nseed = 4\n"))
	if err != nil {
		t.Fatal(err)
	}
	if p, err = sp.Resolve(nil); err != nil || p.Blocks != 2 || p.NumUnits() != 18 {
		t.Fatalf("%v %+v", err, p)
	}
}
