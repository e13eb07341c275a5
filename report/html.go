package report

import (
	"fmt"
	"html/template"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
)

// HTMLReport is everything the HTML report shows.
type HTMLReport struct {
	Analyses []Analysis
	// Strata holds the analyses of a split plot or a Latin square, which
	// come instead of Analyses.
	Strata  []StrataAnalysis
	Plan    *design.Plan // nil for a plain CSV table
	Check   []string     // the data check's findings, one per line
	Command string       // the command that reproduces the report
	Version string
	Unit    string // response unit for axis labels, if known
}

type htmlTable struct {
	Caption string
	Head    []string
	Right   []bool
	Rows    [][]string
}

func toHTML(t table, caption string) htmlTable {
	return htmlTable{Caption: caption, Head: t.head, Right: t.right, Rows: t.rows}
}

type htmlSection struct {
	Response string
	Blocks   []htmlBlock
	Figures  []htmlFigure
}

// htmlBlock is one block of the analysis (see Analysis.blocks).
type htmlBlock struct {
	Title   string
	Lines   []string
	Bullets bool
	Table   *htmlTable
	Notes   []string // paragraphs after the table
	Caution bool
	ID      string
}

type htmlFigure struct {
	SVG   template.HTML
	Title string
}

// HTML writes one self-contained page: inline CSS and SVG figures, no
// scripts and nothing fetched from the network.
func HTML(w io.Writer, r HTMLReport) error {
	var secs []htmlSection
	for _, a := range r.Analyses {
		s := htmlSection{Response: a.Table.Response}
		for _, b := range a.blocks() {
			hb := htmlBlock{Title: b.title, Lines: b.lines, Bullets: b.bullets, Caution: b.title == "Cautions"}
			if b.title == "Checks of the assumptions" {
				hb.ID = "assumptions-" + a.Table.Response
			}
			if b.tab != nil {
				t := toHTML(*b.tab, "")
				hb.Table = &t
			}
			s.Blocks = append(s.Blocks, hb)
		}
		figs, err := AnalysisFigures(a, r.Unit)
		if err != nil {
			return err
		}
		for _, f := range figs {
			svg, err := f.InlineSVG()
			if err != nil {
				return err
			}
			// The SVG comes from gonum/plot, not from user input: safe to inline.
			s.Figures = append(s.Figures, htmlFigure{SVG: template.HTML(svg), Title: f.Title})
		}
		secs = append(secs, s)
	}
	for _, a := range r.Strata {
		s := htmlSection{Response: a.Response}
		s.Blocks = append(s.Blocks, htmlBlock{Lines: []string{"Design: " + a.Design + ".", "Method: " + a.Method + "."}})
		for _, sec := range a.sections() {
			hb := htmlBlock{Title: sec.title, Notes: sec.notes}
			if len(sec.tb.head) > 0 {
				t := toHTML(sec.tb, "")
				hb.Table = &t
			}
			s.Blocks = append(s.Blocks, hb)
		}
		s.Blocks = append(s.Blocks, htmlBlock{Title: "Cautions", Lines: a.cautions(), Bullets: true, Caution: true})
		figs, err := StrataFigures(a, r.Unit)
		if err != nil {
			return err
		}
		for _, f := range figs {
			svg, err := f.InlineSVG()
			if err != nil {
				return err
			}
			s.Figures = append(s.Figures, htmlFigure{SVG: template.HTML(svg), Title: f.Title})
		}
		secs = append(secs, s)
	}
	var study [][2]string
	if p := r.Plan; p != nil {
		kind := "completely randomised design"
		switch {
		case p.Design == design.RCBD:
			kind = fmt.Sprintf("randomised complete block design, %d %s", p.Blocks, design.Plural(p.BlockName))
		case p.Strata():
			kind = p.DesignName()
		}
		var fs []string
		for _, f := range p.Factors {
			fs = append(fs, f.Name+": "+strings.Join(f.Levels, ", "))
		}
		seed := fmt.Sprint(p.Seed)
		if p.Blind {
			seed = "kept with the unblinding key"
		}
		study = [][2]string{
			{"Title", p.Title}, {"Design", kind}, {"Treatments", fmt.Sprintf("%d (%s)", len(p.Treatments()), strings.Join(fs, "; "))},
			{"Units", fmt.Sprint(p.NumUnits())}, {"Seed", seed + " (generator " + p.Generator + ")"}, {"Plan fingerprint", p.Fingerprint()},
		}
		if p.Control != "" {
			study = append(study, [2]string{"Control", p.Control})
		}
	}
	study = append(study, [2]string{"allot version", r.Version})
	title := "Analysis report"
	if r.Plan != nil {
		title = r.Plan.Title
	}
	return htmlTemplate.Execute(w, struct {
		Title    string
		Study    [][2]string
		Check    []string
		Sections []htmlSection
		Command  string
	}{title, study, r.Check, secs, r.Command})
}

var htmlTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>{{.Title}} — allot report</title>
<style>
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; max-width: 60rem; margin: 2rem auto; padding: 0 1rem; color: #1d2327; line-height: 1.45; }
h1 { font-size: 1.6rem; border-bottom: 3px solid #0072b2; padding-bottom: .3rem; }
h2 { font-size: 1.3rem; margin-top: 2.2rem; color: #0b3c5d; }
h3 { font-size: 1.05rem; margin-top: 1.4rem; }
table { border-collapse: collapse; margin: .6rem 0 1rem; font-size: .92rem; }
caption { text-align: left; font-weight: 600; padding: .3rem 0; }
th, td { padding: .25rem .7rem; border-bottom: 1px solid #cfd8dc; }
th { background: #e8eff4; text-align: left; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
dl.study { display: grid; grid-template-columns: 12rem 1fr; gap: .2rem 1rem; }
dl.study dt { font-weight: 600; }
dl.study dd { margin: 0; word-break: break-all; }
figure { margin: 1rem 0; }
figure svg { max-width: 100%; height: auto; }
figcaption { font-size: .9rem; color: #455a64; }
.caution { background: #fff6e5; border-left: 4px solid #e69f00; padding: .5rem 1rem; }
code { background: #f1f4f6; padding: .1rem .3rem; }
</style>
</head>
<body>
<h1>{{.Title}}</h1>
<section id="study">
<h2>Study</h2>
<dl class="study">{{range .Study}}<dt>{{index . 0}}</dt><dd>{{index . 1}}</dd>{{end}}</dl>
</section>
<section id="check">
<h2>Data check</h2>
{{if .Check}}<ul>{{range .Check}}<li>{{.}}</li>{{end}}</ul>{{else}}<p>No problems were found in the data.</p>{{end}}
</section>
{{range .Sections}}
<section class="analysis" id="analysis-{{.Response}}">
<h2>Analysis of {{.Response}}</h2>
{{range .Blocks}}{{if .Caution}}<div class="caution">{{end}}{{if .Title}}<h3{{if .ID}} id="{{.ID}}"{{end}}>{{.Title}}</h3>{{end}}
{{if .Bullets}}{{if .Lines}}<ul>{{range .Lines}}<li>{{.}}</li>{{end}}</ul>{{end}}{{else}}{{range .Lines}}<p>{{.}}</p>{{end}}{{end}}
{{with .Table}}{{template "table" .}}{{end}}{{range .Notes}}<p>{{.}}</p>{{end}}{{if .Caution}}</div>{{end}}
{{end}}
{{if .Figures}}<h3>Figures</h3>{{end}}
{{range .Figures}}<figure>{{.SVG}}<figcaption>{{.Title}}</figcaption></figure>{{end}}
</section>
{{end}}
<section id="reproduce">
<h2>Reproduce</h2>
<p>This report was made by <code>{{.Command}}</code>.</p>
</section>
</body>
</html>
{{define "table"}}<table>{{if .Caption}}<caption>{{.Caption}}</caption>{{end}}
<thead><tr>{{range $i, $h := .Head}}<th{{if index $.Right $i}} class="n"{{end}}>{{$h}}</th>{{end}}</tr></thead>
<tbody>{{range .Rows}}<tr>{{range $i, $c := .}}<td{{if index $.Right $i}} class="n"{{end}}>{{$c}}</td>{{end}}</tr>{{end}}</tbody>
</table>{{end}}
`))
