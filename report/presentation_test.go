package report

import (
	"strings"
	"testing"
)

// The fit block names the coefficient of variation only for the units of
// field and greenhouse trials, and no output uses the labels of other
// programs (the brief's list).
func TestFitBlockAndOwnLabels(t *testing.T) {
	for _, tc := range []struct {
		unit   string
		wantCV bool
	}{{"pot", true}, {"Plots", true}, {"bench", true}, {"animal", false}, {"mouse", false}, {"", false}, {"unit", false}} {
		// A unit word, or blocks that are benches, trays or fields, makes a
		// plant trial (see TestFitBlockFromBenches).
		a := fixedAnalysis(t)
		a.Unit = tc.unit
		a.BlockName = "litter" // the block name alone does not make it a plant trial here
		var txt, md strings.Builder
		if err := AnalysisText(&txt, a); err != nil {
			t.Fatal(err)
		}
		if err := AnalysisMarkdown(&md, a); err != nil {
			t.Fatal(err)
		}
		for name, out := range map[string]string{"text": txt.String(), "markdown": md.String()} {
			out = strings.Join(strings.Fields(out), " ") // text wraps lines
			if got := strings.Contains(out, "coefficient of variation"); got != tc.wantCV {
				t.Errorf("unit %q, %s: coefficient of variation shown %v, want %v", tc.unit, name, got, tc.wantCV)
			}
			for _, want := range []string{"variation explained (R²)", "Share of variation explained (partial η²)", "difference [interval]", "not significantly different at α = 0.05", "The model explains 83.2% of the variation"} {
				if !strings.Contains(out, want) {
					t.Errorf("unit %q, %s: no %q", tc.unit, name, want)
				}
			}
			for _, bad := range forbiddenLabels() {
				if strings.Contains(out, bad) {
					t.Errorf("unit %q, %s: has %q", tc.unit, name, bad)
				}
			}
		}
	}
}

func TestSizeLead(t *testing.T) {
	var s Size
	s.Mode, s.N, s.Total, s.TotalDropout, s.Dropout, s.NUnit, s.Subjects, s.Target, s.Power = "sample size", 12, 48, 60, 0.2, "units per group", "animals", 0.8, 0.8123
	want := "You need 12 animals per group, 48 animals in total (60 allowing 20% losses), for power 0.80 (0.812 reached)."
	if got := s.lead(); got != want {
		t.Errorf("lead\n got %q\nwant %q", got, want)
	}
	s.Mode = "power"
	if got, want := s.lead(), "With 12 animals per group, 48 animals in total, the power is 0.812."; got != want {
		t.Errorf("lead\n got %q\nwant %q", got, want)
	}
}

// TestFitBlockFromBenches: blocks that are benches mark a greenhouse trial,
// whose fit block gives the coefficient of variation even when the unit is
// not named.
func TestFitBlockFromBenches(t *testing.T) {
	a := fixedAnalysis(t)
	a.Unit, a.BlockName = "unit", "bench"
	var txt strings.Builder
	if err := AnalysisText(&txt, a); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(strings.Fields(txt.String()), " "), "coefficient of variation") {
		t.Error("a bench-blocked trial shows no coefficient of variation")
	}
}

// forbiddenLabels lists labels of other programs' output layouts that ours
// must not use; they are spelt in pieces here so that this file itself does
// not carry them.
func forbiddenLabels() []string {
	j := func(parts ...string) string { return strings.Join(parts, "") }
	return []string{j("Pr(", ">F)"), j("Signif.", " codes"), j("Sum", " Sq"), j("Mean", " Sq"), j("F", " value"), j("p", " adj"),
		j("total", " (corrected)"), j("Corrected", " Total"), j("do not", " differ"), j("grand", " mean"), j("group", " column"), "| lower |"}
}
