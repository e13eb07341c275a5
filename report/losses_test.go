package report

import (
	"bytes"
	"strings"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
)

// The loss table appears in every format, with its reasons and test.
func TestLossTableEveryFormat(t *testing.T) {
	d := analyze.Data{Response: "weight_g",
		Values:  column.Of([]string{"21.2", "22.0", "20.8", "23.5", "24.1", "22.9", "23.3"}),
		Factors: []analyze.Column{{Name: "diet", Levels: []string{"std", "high"}, Values: column.Of([]string{"std", "std", "std", "high", "high", "high", "high"})}},
		Lost:    []analyze.LostUnit{{Unit: "M07", Levels: []string{"std"}, Status: "lost", Reason: "found dead day 9"}, {Unit: "M08", Levels: []string{"std"}, Status: "excluded", Reason: "protocol deviation"}}}
	res, err := analyze.Run(d, analyze.RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	a := Analysis{Result: res, Unit: "mouse"}
	var txt, md, js, page bytes.Buffer
	if err := AnalysisText(&txt, a); err != nil {
		t.Fatal(err)
	}
	if err := AnalysisMarkdown(&md, a); err != nil {
		t.Fatal(err)
	}
	if err := AnalysisJSON(&js, a); err != nil {
		t.Fatal(err)
	}
	if err := HTML(&page, HTMLReport{Analyses: []Analysis{a}}); err != nil {
		t.Fatal(err)
	}
	for name, out := range map[string]string{"text": txt.String(), "markdown": md.String(), "html": page.String()} {
		for _, want := range []string{"Units enrolled, lost, excluded and analysed", "M07: found dead day 9", "M08: protocol deviation", "Pearson χ² test of equal loss proportions"} {
			if !strings.Contains(out, want) {
				t.Errorf("%s lacks %q", name, want)
			}
		}
	}
	for _, want := range []string{`"losses"`, `"enrolled": 5`, `"excluded": 1`, `"reasons"`, `"format": "allot.analysis/v1"`} {
		if !strings.Contains(js.String(), want) {
			t.Errorf("JSON lacks %s", want)
		}
	}
}
