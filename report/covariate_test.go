package report

import (
	"bytes"
	"encoding/xml"
	"image/png"
	"strings"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
)

// Rendering fixtures (invented numbers, not references).
func TestCovarianceGolden(t *testing.T) {
	d := analyze.Data{Response: "weight_g",
		Values:  column.Of([]string{"31.2", "33.0", "29.8", "35.1", "36.0", "34.2", "30.1", "32.2", "33.9", "37.0", "35.5", "31.0"}),
		Factors: []analyze.Column{{Name: "diet", Values: column.Of([]string{"A", "A", "A", "A", "B", "B", "B", "B", "C", "C", "C", "C"})}}}
	x := []string{"20.1", "21.5", "19.0", "22.8", "21.0", "20.2", "18.5", "19.9", "21.7", "23.0", "22.1", "19.4"}
	r, err := analyze.ANCOVA(d, "start_g", x, analyze.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var txt, md strings.Builder
	if err := CovarianceText(&txt, Covariance{ANCOVAResult: r}); err != nil {
		t.Fatal(err)
	}
	if err := CovarianceMarkdown(&md, Covariance{ANCOVAResult: r}); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"adjusted mean", "Equal slopes", "Balance of start_g", "Tukey–Kramer"} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("text lacks %q", want)
		}
	}
	golden(t, "ancova_text", txt.String())
	golden(t, "ancova_markdown", md.String())
}

func TestProfilesGolden(t *testing.T) {
	rm := analyze.Repeated{Response: "height_mm", Times: []string{"day 0", "day 7", "day 14"}, TimeValues: []float64{0, 7, 14},
		Treatment: "feed", Units: []string{"1", "2", "3", "4", "5", "6"}, Groups: []string{"F1", "F1", "F1", "F2", "F2", "F2"},
		Values: [][]string{{"10", "14", "19"}, {"11", "15", "21"}, {"9", "13", "17"}, {"10", "17", "25"}, {"12", "18", "27"}, {"11", "16", "24"}}}
	r, err := analyze.SplitPlotInTime(rm, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	var txt strings.Builder
	if err := ProfilesText(&txt, Profiles{RMResult: r, Unit: "mm"}); err != nil {
		t.Fatal(err)
	}
	golden(t, "profiles_text", txt.String())
	fig, err := ProfileFigure(Profiles{RMResult: r, Unit: "mm"})
	if err != nil {
		t.Fatal(err)
	}
	svg, err := fig.Render("svg")
	if err != nil {
		t.Fatal(err)
	}
	dec := xml.NewDecoder(bytes.NewReader(svg))
	for {
		if _, err := dec.Token(); err != nil {
			if err.Error() != "EOF" {
				t.Fatalf("SVG does not parse: %v", err)
			}
			break
		}
	}
	for _, want := range []string{"day 14", "F2"} {
		if !bytes.Contains(svg, []byte(want)) {
			t.Errorf("SVG lacks %q", want)
		}
	}
	b, err := fig.Render("png")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := png.Decode(bytes.NewReader(b)); err != nil {
		t.Fatal(err)
	}
}
