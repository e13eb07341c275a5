package report

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"flag"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"golang.org/x/net/html"
)

var update = flag.Bool("update", false, "rewrite golden files")

func golden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		os.MkdirAll("testdata", 0o755)
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (go test ./report -update writes it)", err)
	}
	if got != string(want) {
		t.Errorf("%s differs:\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

// fixedAnalysis is a 3-treatment, 4-block trial with one typing slip, so
// that every part of the report has something to show.
func fixedAnalysis(t *testing.T) Analysis {
	t.Helper()
	vals := [][]string{
		{"12.1", "13.4", "15.2"}, {"11.8", "13.9", "15.8"}, {"12.6", "14.1", "16.0"}, {"12.0", "13.2", "19.9"},
		{"12.3", "13.6", "15.5"}, {"11.9", "13.8", "15.9"},
	}
	d := analyze.Data{Response: "height_cm", Factors: []analyze.Column{{Name: "feed", Levels: []string{"F0", "F1", "F2"}}}, Block: &analyze.Column{Name: "bench"}}
	for b, row := range vals {
		for k, v := range row {
			d.Values = d.Values.Append(v)
			d.Factors[0].Values = d.Factors[0].Values.Append([]string{"F0", "F1", "F2"}[k])
			d.Block.Values = d.Block.Values.Append(strconv.Itoa(b + 1))
			d.Units = d.Units.Append(strconv.Itoa(100*(b+1) + k + 1))
			d.Where = d.Where.Append("Entry!E" + strconv.Itoa(2+3*b+k))
		}
	}
	r, err := analyze.Run(d, analyze.RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return Analysis{Result: r, Unit: "pot", BlockName: "bench"}
}

func TestTextAndMarkdownGolden(t *testing.T) {
	a := fixedAnalysis(t)
	var txt, md bytes.Buffer
	if err := AnalysisText(&txt, a); err != nil {
		t.Fatal(err)
	}
	if err := AnalysisMarkdown(&md, a); err != nil {
		t.Fatal(err)
	}
	golden(t, "analysis_text", txt.String())
	golden(t, "analysis_markdown", md.String())
}

func testPlan() *design.Plan {
	p := design.Plan{Title: "Report test", Design: design.RCBD, Factors: []design.Factor{{Name: "feed", Levels: []string{"F0", "F1", "F2"}}},
		Reps: []int{1, 1, 1}, Blocks: 6, BlockName: "bench", Seed: 3, Generator: randomize.Generator}
	return &p
}

func renderHTML(t *testing.T) (string, Analysis) {
	t.Helper()
	a := fixedAnalysis(t)
	var b bytes.Buffer
	if err := HTML(&b, HTMLReport{Analyses: []Analysis{a}, Plan: testPlan(), Check: []string{"warning: sheet \"Entry\": one value missing"}, Command: "allot analyze trial.xlsx --report r.html", Version: "test", Unit: "cm"}); err != nil {
		t.Fatal(err)
	}
	return b.String(), a
}

func TestHTMLReport(t *testing.T) {
	page, a := renderHTML(t)
	doc, err := html.Parse(strings.NewReader(page))
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]bool{}
	svgs, scripts, remote := 0, 0, 0
	var walk func(n *html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode {
			for _, at := range n.Attr {
				if at.Key == "id" {
					ids[at.Val] = true
				}
				if (at.Key == "src" || at.Key == "href") && strings.Contains(at.Val, "://") {
					remote++
				}
			}
			switch n.Data {
			case "svg":
				svgs++
			case "script":
				scripts++
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(doc)
	for _, id := range []string{"study", "check", "analysis-height_cm", "assumptions-height_cm", "reproduce"} {
		if !ids[id] {
			t.Errorf("no section %q", id)
		}
	}
	if svgs != 3 || scripts != 0 || remote != 0 {
		t.Errorf("%d inline SVGs (want 3), %d scripts, %d remote references", svgs, scripts, remote)
	}
	for _, want := range []string{"Plan fingerprint", testPlan().Fingerprint(), "Checks of the assumptions", "Reading", "Cautions", "allot analyze trial.xlsx --report r.html", "one value missing", "403", "Entry!E13"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	// Every number shown equals the JSON output's, in the report's format.
	var js bytes.Buffer
	if err := AnalysisJSON(&js, a); err != nil {
		t.Fatal(err)
	}
	var jdoc struct {
		Format    string `json:"format"`
		Responses []struct {
			Anova struct {
				Terms []struct {
					DF         int
					SS, MS, F  float64
					P          float64
					PartialEta *float64 `json:"partial_eta2"`
					Block      bool     `json:"block"`
				} `json:"terms"`
				Residual struct {
					SS float64 `json:"ss"`
				} `json:"residual"`
			} `json:"anova"`
		} `json:"responses"`
	}
	if err := json.Unmarshal(js.Bytes(), &jdoc); err != nil {
		t.Fatal(err)
	}
	if jdoc.Format != "allot.analysis/v1" || len(jdoc.Responses) != 1 {
		t.Fatalf("JSON document: format %q, %d responses", jdoc.Format, len(jdoc.Responses))
	}
	out := jdoc.Responses[0].Anova
	for _, term := range out.Terms {
		// No effect size for blocks: they are not a question the study asks.
		if term.Block != (term.PartialEta == nil) {
			t.Errorf("term block=%v has partial η² %v", term.Block, term.PartialEta)
		}
	}
	for _, term := range out.Terms {
		cells := []string{num(term.SS, 5), num(term.MS, 5), num(term.F, 4), pval(term.P)}
		if term.PartialEta != nil {
			cells = append(cells, fixed(*term.PartialEta, 3))
		}
		for _, cell := range cells {
			if !strings.Contains(page, "<td class=\"n\">"+cell+"</td>") {
				t.Errorf("HTML lacks the JSON value %s", cell)
			}
		}
	}
	if !strings.Contains(page, "<td class=\"n\">"+num(out.Residual.SS, 5)+"</td>") {
		t.Error("HTML lacks the residual SS")
	}
}

// TestHTMLInBrowser renders the report in headless Chromium and checks the
// screenshot is not blank and nothing failed to load.
func TestHTMLInBrowser(t *testing.T) {
	chrome, err := exec.LookPath("chromium")
	if err != nil {
		t.Skip("chromium not installed (Debian package chromium; .ci/run installs it): skipping the browser check")
	}
	page, _ := renderHTML(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "r.html")
	os.WriteFile(path, []byte(page), 0o644)
	shot := filepath.Join(dir, "r.png")
	cmd := exec.Command(chrome, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync", "--user-data-dir="+filepath.Join(dir, "profile"),
		"--enable-logging=stderr", "--v=0", "--screenshot="+shot, "--window-size=1200,3000", "file://"+path)
	outb, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("chromium: %v\n%s", err, outb)
	}
	for _, bad := range []string{"net::ERR_FILE_NOT_FOUND", "Failed to load resource", "ERR_NAME_NOT_RESOLVED"} {
		if strings.Contains(string(outb), bad) {
			t.Errorf("browser log: %s", bad)
		}
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	// Non-blank: a good share of pixels differ from the white background.
	b := img.Bounds()
	dark := 0
	for y := b.Min.Y; y < b.Max.Y; y += 4 {
		for x := b.Min.X; x < b.Max.X; x += 4 {
			r, g, bl, _ := img.At(x, y).RGBA()
			if r+g+bl < 3*0xE000 {
				dark++
			}
		}
	}
	if dark < 2000 {
		t.Errorf("screenshot nearly blank: %d dark samples", dark)
	}
}

func TestFiguresDecode(t *testing.T) {
	a := fixedAnalysis(t)
	figs, err := AnalysisFigures(a, "cm")
	if err != nil {
		t.Fatal(err)
	}
	lay, _ := randomize.Assign(*testPlan())
	figs = append(figs, MapFigure(lay))
	for _, f := range figs {
		svg, err := f.Render("svg")
		if err != nil {
			t.Fatal(err)
		}
		dec := xml.NewDecoder(bytes.NewReader(svg))
		elems := 0
		for {
			tok, err := dec.Token()
			if err != nil {
				break
			}
			if _, ok := tok.(xml.StartElement); ok {
				elems++
			}
		}
		if elems < 20 {
			t.Errorf("%s.svg: %d elements", f.Name, elems)
		}
		pb, err := f.Render("png")
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(pb))
		if err != nil || img.Bounds().Dx() < 300 {
			t.Errorf("%s.png: %v", f.Name, err)
		}
	}
	if !strings.Contains(string(must(figs[1].Render("svg"))), "403") {
		t.Error("the residual plot does not label the flagged unit 403")
	}
}

func must(b []byte, err error) []byte {
	if err != nil {
		panic(err)
	}
	return b
}

func TestLargeResidualFiguresThinned(t *testing.T) {
	n := 20000
	d := analyze.Data{Response: "y", Factors: []analyze.Column{{Name: "g"}}}
	for i := 0; i < n; i++ {
		d.Values = d.Values.Append(strconv.Itoa(100 + (i*7919)%23))
		d.Factors[0].Values = d.Factors[0].Values.Append(strconv.Itoa(i % 4))
	}
	r, err := analyze.Run(d, analyze.RunOptions{PostHoc: analyze.MethodNone})
	if err != nil {
		t.Fatal(err)
	}
	figs, err := ResidualFigures(Analysis{Result: r}, "")
	if err != nil {
		t.Fatal(err)
	}
	svg, err := figs[0].Render("svg")
	if err != nil {
		t.Fatal(err)
	}
	if len(svg) > 2<<20 || !strings.Contains(figs[0].Title, "every 4th of 20000 points") {
		t.Errorf("residual figure %d bytes, title %q", len(svg), figs[0].Title)
	}
}

func TestCautionsFitSubjects(t *testing.T) {
	tests := []struct {
		subjects string
		want     []string
		not      string
	}{
		{"animals", []string{"animal-ethics committee", "3Rs", "Humane endpoints"}, "Benches"},
		{"plants", []string{"Benches, positions and seasons", "qualified statistician"}, "3Rs"},
		{"units", []string{"ethics committee", "qualified statistician"}, "Humane endpoints"},
	}
	for _, tt := range tests {
		all := strings.Join(Cautions(tt.subjects), " ")
		for _, w := range tt.want {
			if !strings.Contains(all, w) {
				t.Errorf("%s: cautions lack %q", tt.subjects, w)
			}
		}
		if strings.Contains(all, tt.not) {
			t.Errorf("%s: cautions contain %q", tt.subjects, tt.not)
		}
	}
	for in, want := range map[string]string{"litter": "litters", "bench": "benches", "day": "days", "colony": "colonies", "block": "blocks"} {
		if got := pluralWord(in); got != want {
			t.Errorf("plural %s: %s, want %s", in, got, want)
		}
	}
}
