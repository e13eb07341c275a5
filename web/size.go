package web

import (
	"bytes"
	"encoding/base64"
	"errors"
	"html/template"
	"net/http"
	"strings"

	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/report"
)

// sizeForm is the form of allot size (its exact-calculation flags and the
// words of the justification).
func sizeForm() *Form {
	return &Form{Groups: []Group{
		{Legend: "The study", Fields: []*Field{
			{Name: "response", Label: "What is measured", Kind: kindText, Help: "the response, for example body weight gain"},
			{Name: "unit", Label: "Its unit", Kind: kindText, Help: "for example g or mg"},
			{Name: "subjects", Label: "What a unit is", Kind: kindSelect, Default: "units", Value: "units", Options: []Option{{"units", "experimental units"}, {"animals", "animals (adds the animal-welfare cautions)"}, {"plants", "plants"}}},
			{Name: "sd-source", Label: "Where the SD comes from", Kind: kindText, Help: "for example: pilot study, 8 animals, 2025"},
			{Name: "effect-reason", Label: "Why this effect matters", Kind: kindText, Help: "the reason the smallest effect worth finding is this big"},
			{Name: "block-name", Label: "What a block is called", Kind: kindText, Help: "for rcbd: litter, bench, day, …"},
		}},
		{Legend: "The layout", Fields: []*Field{
			{Name: "design", Label: "Design", Kind: kindSelect, Default: "crd", Value: "crd", Options: []Option{{"crd", "completely randomised (crd)"}, {"rcbd", "randomised complete blocks (rcbd)"}}},
			{Name: "groups", Label: "Number of groups", Kind: kindNumber, Help: "for a one-way layout, for example 4"},
			{Name: "levels", Label: "Names of the groups", Kind: kindText, Help: "for a one-way layout, a comma list such as vehicle,low,high"},
			{Name: "control", Label: "Control group", Kind: kindText, Help: "the group the others are compared with (default the first)"},
			{Name: "factor", Label: "Factors of a factorial", Kind: kindLines, Help: "one per line, NAME=LEVELS: a count or a comma list, for example dose=3 or diet=chow,fat", Placeholder: "dose=3\ndiet=chow,fat"},
			{Name: "term", Label: "Effect to plan for (factorial)", Kind: kindText, Help: "a factor NAME, or NAME1,NAME2 for their interaction"},
			{Name: "blocks", Label: "Blocks to evaluate", Kind: kindNumber, Help: "report power for this many blocks (benches, litters, days); implies the rcbd design"},
			{Name: "ratios", Label: "Unequal allocation", Kind: kindText, Help: "one ratio per group, for example 2,1,1"},
		}},
		{Legend: "The effect (give one)", Fields: []*Field{
			{Name: "means", Label: "Expected group means", Kind: kindText, Help: "comma list in the response's units, for example 12,15,15,18 (needs the SD)"},
			{Name: "sd", Label: "Standard deviation (SD)", Kind: kindNumber, Help: "between units (within blocks for rcbd)"},
			{Name: "diff", Label: "Smallest difference that matters", Kind: kindNumber, Help: "between any two means, in the response's units (needs the SD)"},
			{Name: "f", Label: "Cohen's f", Kind: kindNumber, Help: "effect size, for example 0.25"},
			{Name: "eta2", Label: "Eta squared", Kind: kindNumber, Help: "proportion of variance explained"},
			{Name: "d", Label: "Standardised difference d", Kind: kindNumber, Help: "two groups only (selects the t test)"},
			{Name: "pilot-n", Label: "Pilot size", Kind: kindNumber, Help: "the SD came from a pilot of this many units: plan with its upper confidence limit"},
			{Name: "pilot-conf", Label: "Confidence of the pilot SD's upper limit", Kind: kindNumber, Default: "0.8", Value: "0.8"},
			{Name: "block-share", Label: "Share of variance explained by blocks", Kind: kindNumber, Help: "rcbd with the total SD: a fraction between 0 and 1"},
		}},
		{Legend: "The test", Fields: []*Field{
			{Name: "alpha", Label: "Significance level (alpha)", Kind: kindNumber, Default: "0.05", Value: "0.05"},
			{Name: "power", Label: "Target power", Kind: kindNumber, Default: "0.8", Value: "0.8"},
			{Name: "sides", Label: "Sides (t tests and comparisons)", Kind: kindSelect, Default: "2", Value: "2", Options: []Option{{"2", "two-sided"}, {"1", "one-sided"}}},
			{Name: "compare", Label: "Planned comparisons", Kind: kindSelect, Options: []Option{{"", "none: the F test of the effect"}, {"control", "each group with the control (Bonferroni)"}, {"dunnett", "each group with the control (Dunnett)"}, {"pairs", "all pairs (Tukey)"}, {"pairs-bonferroni", "all pairs (Bonferroni)"}}},
			{Name: "direction", Label: "Direction of a one-sided test", Kind: kindSelect, Help: "the treatment expected below or above the control (implies one side)", Options: []Option{{"", "either (as the sides say)"}, {"lower", "lower than the control"}, {"higher", "higher than the control"}}},
			{Name: "n", Label: "Units per group (to report power)", Kind: kindNumber, Help: "leave empty to solve for the size; blocks for rcbd"},
			{Name: "detect", Label: "Report the smallest detectable effect at this n", Kind: kindCheck},
		}},
		{Legend: "Attrition", Fields: []*Field{
			{Name: "dropout", Label: "Expected attrition", Kind: kindNumber, Help: "fraction of units expected to be lost, for example 0.15"},
		}},
	}}
}

// sizeResult is what the size page shows.
type sizeResult struct {
	Summary       string // the text summary of allot size
	Answer        power.Answer
	Justification []string
	Curve         template.URL // data: URL of the SVG power curve
	CurveID       string
	JSON          string
	Command       string
}

func (s *Server) sizePage(w http.ResponseWriter, r *http.Request) {
	f := sizeForm()
	if r.Method != http.MethodPost {
		s.render(w, http.StatusOK, "size", page{Title: "Plan the size", Form: f})
		return
	}
	if !s.parseForm(w, r, "size", "Plan the size", f) {
		return
	}
	f.fill(r.PostForm)
	res, err := s.sizeAnswer(f)
	if err != nil || f.HasErrors() {
		if err != nil && !f.optionError(err) {
			var fe *power.FieldError
			if errors.As(err, &fe) {
				f.setError(fe.Field, err.Error())
			} else {
				f.Problem = err.Error()
			}
		}
		s.render(w, http.StatusUnprocessableEntity, "size", page{Title: "Plan the size", Form: f})
		return
	}
	s.render(w, http.StatusOK, "size", page{Title: "Plan the size", Form: f, Result: res})
}

// sizeAnswer parses the form into the inputs allot size takes, resolves
// them as the command does (package options) and asks package power.
func (s *Server) sizeAnswer(f *Form) (*sizeResult, error) {
	in := sizeInput(f)
	if f.HasErrors() {
		return nil, nil
	}
	req, study, err := in.Request()
	if err != nil {
		return nil, err
	}
	ans, err := power.Compute(req)
	if err != nil {
		return nil, err
	}
	rep := report.Size{Answer: ans, Study: study, Command: f.command("allot size"), Version: s.cfg.Version}
	res := &sizeResult{Answer: ans, Command: rep.Command}
	var b bytes.Buffer
	if err := report.SizeText(&b, rep); err != nil {
		return nil, err
	}
	res.Summary = b.String()
	b.Reset()
	if err := report.SizeJSON(&b, rep, false); err != nil {
		return nil, err
	}
	res.JSON = b.String()
	res.Justification = strings.Split(report.Justification(rep), "\n\n")
	pts, err := power.CurvePoints(req, ans)
	if err != nil {
		return nil, err
	}
	fig, err := report.PowerCurveFigure(pts, rep)
	if err != nil {
		return nil, err
	}
	svg, err := fig.Render("svg")
	if err != nil {
		return nil, err
	}
	res.Curve = template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(svg))
	res.CurveID = s.store.put(item{name: "power-curve.svg", contentType: "image/svg+xml", data: svg})
	return res, nil
}

// sizeInput reads the form's fields into the inputs of allot size, each
// field standing for the flag of its name; a field counts as given (the
// flag as set) when it holds something other than the flag's default.
func sizeInput(f *Form) options.Size {
	var req power.Request
	req.Groups = f.int("groups")
	req.Alpha = f.float("alpha")
	req.Power = f.float("power")
	req.Sides = f.int("sides")
	req.N = f.int("n")
	req.Detect = f.check("detect")
	req.F = f.float("f")
	req.Eta2 = f.float("eta2")
	req.SD = f.float("sd")
	req.Diff = f.float("diff")
	req.D = f.float("d")
	req.PilotN = f.int("pilot-n")
	req.PilotConf = f.float("pilot-conf")
	req.BlockShare = f.float("block-share")
	req.Dropout = f.float("dropout")
	req.ControlName = strings.TrimSpace(f.text("control"))
	req.Direction = f.text("direction")
	study := report.Study{Response: strings.TrimSpace(f.text("response")), Unit: strings.TrimSpace(f.text("unit")),
		SDSource: strings.TrimSpace(f.text("sd-source")), Subjects: f.text("subjects"),
		BlockName: strings.TrimSpace(f.text("block-name")), EffectReason: strings.TrimSpace(f.text("effect-reason"))}
	in := options.Size{Req: req, Study: study, Factors: f.lines("factor"), Term: f.text("term"), Design: f.text("design"),
		Blocks: f.int("blocks"), Means: f.text("means"), Ratios: f.text("ratios"), Levels: f.text("levels"), Compare: f.text("compare")}
	if in.Design == "" {
		in.Design = "crd"
	}
	in.Given = map[string]bool{}
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			in.Given[x.Name] = f.given(x.Name)
		}
	}
	return in
}
