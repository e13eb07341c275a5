package report

import (
	"strings"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
)

// methodData is a small invented data set (a rendering fixture, not a
// reference): germinated seeds out of 20 per tray, four mixes, two benches.
func methodData() analyze.Data {
	return analyze.Data{
		Response: "germinated",
		Values:   column.Of([]string{"12", "15", "9", "17", "11", "16", "10", "18", "13", "14", "8", "19", "12", "17", "9", "16"}),
		Factors: []analyze.Column{{Name: "mix", Values: column.Of([]string{"m1", "m2", "m3", "m4", "m1", "m2", "m3", "m4",
			"m1", "m2", "m3", "m4", "m1", "m2", "m3", "m4"})}},
		Block: &analyze.Column{Name: "bench", Values: column.Of([]string{"1", "1", "1", "1", "2", "2", "2", "2", "3", "3", "3", "3", "4", "4", "4", "4"})},
	}
}

func TestMethodGolden(t *testing.T) {
	d := methodData()
	oneWay := d
	oneWay.Block = nil
	w, err := analyze.Welch(oneWay, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	kw, err := analyze.KruskalWallis(oneWay, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	fr, err := analyze.Friedman(d, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	trials := make([]float64, d.Values.Len())
	for i := range trials {
		trials[i] = 20
	}
	g, err := analyze.FitGLM(d, analyze.GLMOptions{Family: analyze.FamilyBinomial, Trials: trials})
	if err != nil {
		t.Fatal(err)
	}
	var txt, md strings.Builder
	for _, m := range []Method{
		{MethodResult: &analyze.MethodResult{Welch: w}, Unit: "tray"},
		{MethodResult: &analyze.MethodResult{Rank: kw}, Unit: "tray"},
		{MethodResult: &analyze.MethodResult{Rank: fr}, Unit: "tray"},
		{MethodResult: &analyze.MethodResult{GLM: g}, Unit: "tray", Missing: 1},
	} {
		if err := MethodText(&txt, m); err != nil {
			t.Fatal(err)
		}
		if err := MethodMarkdown(&md, m); err != nil {
			t.Fatal(err)
		}
	}
	for _, s := range []string{txt.String(), md.String()} {
		for _, want := range []string{"Games–Howell", "Kruskal–Wallis", "Friedman", "odds ratio", "likelihood-ratio", "exact permutation p"} {
			if !strings.Contains(s, want) {
				t.Errorf("output lacks %q", want)
			}
		}
	}
	golden(t, "methods_text", txt.String())
	golden(t, "methods_markdown", md.String())
}
