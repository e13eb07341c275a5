package options

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/report"
)

// Methods holds allot analyze's choices beyond the least-squares ANOVA, as
// typed: --method, --family, --trials, --transform, --covariate and
// --summary.
type Methods struct {
	Method    string // anova (default), welch or rank
	Family    string // binomial or poisson (a GLM)
	Trials    string // binomial: trials per unit, a number or a column
	Transform string // log, sqrt or logit
	Covariate string // a baseline covariate column or response
	Summary   string // repeated measurements: slope, auc or final
}

// Validate checks the values and their combinations; errors name the flag.
func (m Methods) Validate() error {
	switch m.Method {
	case "", analyze.MethodANOVA, analyze.MethodWelch, analyze.MethodRank:
	default:
		return errorf("method", "--method %s: must be anova, welch or rank (for counts and proportions give --family)", m.Method)
	}
	switch m.Family {
	case "", analyze.FamilyBinomial, analyze.FamilyPoisson:
	default:
		return errorf("family", "--family %s: must be binomial (successes out of trials) or poisson (counts)", m.Family)
	}
	switch m.Transform {
	case analyze.TransformNone, analyze.TransformLog, analyze.TransformSqrt, analyze.TransformLogit:
	default:
		return errorf("transform", "--transform %s: must be log, sqrt or logit", m.Transform)
	}
	switch m.Summary {
	case "", analyze.SummarySlope, analyze.SummaryAUC, analyze.SummaryFinal:
	default:
		return errorf("summary", "--summary %s: must be slope, auc or final", m.Summary)
	}
	switch {
	case m.Family != "" && m.Method != "" && m.Method != analyze.MethodANOVA:
		return errorf("family", "--family %s with --method %s: a GLM is its own method; give one of them", m.Family, m.Method)
	case m.Family != analyze.FamilyBinomial && m.Trials != "" && m.Family != "":
		return errorf("trials", "--trials goes with --family binomial")
	case m.Transform != "" && (m.Family != "" || m.Method == analyze.MethodRank):
		return errorf("transform", "--transform %s: a GLM models counts on their own scale and a rank test does not need a transformation; leave one out", m.Transform)
	case m.Covariate != "" && (m.Family != "" || m.Method == analyze.MethodWelch || m.Method == analyze.MethodRank):
		return errorf("covariate", "--covariate: the analysis of covariance is a least-squares model; leave out --method and --family")
	}
	return nil
}

// Choose returns the method and family for a response of the given kind
// (design.Response.Kind), the flags taking precedence: a count gets the
// Poisson GLM, a proportion the binomial GLM, a score a rank test.
func (m Methods) Choose(kind string) (method, family string) {
	if m.Family != "" {
		return analyze.MethodGLM, m.Family
	}
	if m.Method != "" {
		return m.Method, ""
	}
	return analyze.ForKind(kind)
}

// AlignTo returns, for each observation of main, the value of extra on the
// same line or unit (matched by unit ID), and the observations that have
// one; main's others are left out by the caller.
func AlignTo(main, extra workbook.Observations) (keep []int, values []string) {
	at := make(map[string]string, extra.Units.Len())
	for i := range extra.Units.Len() {
		if extra.Values.Len() > 0 {
			at[extra.Units.At(i)] = extra.Values.At(i)
		}
	}
	for i := range main.Units.Len() {
		if v, ok := at[main.Units.At(i)]; ok {
			keep = append(keep, i)
			values = append(values, v)
		}
	}
	return keep, values
}

// Subset keeps observations idx of d (values, factors, block, units).
func Subset(d analyze.Data, idx []int) analyze.Data {
	pick := func(v column.Text) column.Text {
		if v.Len() == 0 {
			return v
		}
		return v.Pick(idx)
	}
	out := d
	out.Values, out.Units, out.Where = pick(d.Values), pick(d.Units), pick(d.Where)
	out.Factors = make([]analyze.Column, len(d.Factors))
	for f, c := range d.Factors {
		out.Factors[f] = analyze.Column{Name: c.Name, Levels: c.Levels, Values: pick(c.Values)}
	}
	if d.Block != nil {
		b := analyze.Column{Name: d.Block.Name, Levels: d.Block.Levels, Values: pick(d.Block.Values)}
		out.Block = &b
	}
	if d.Subsamples != nil {
		out.Subsamples = make([][]string, len(idx))
		for k, i := range idx {
			out.Subsamples[k] = d.Subsamples[i]
		}
	}
	return out
}

// FixedTrials parses --trials as a whole number, or returns false for a
// column name.
func FixedTrials(s string) (int, bool) {
	n, err := strconv.Atoi(strings.TrimSpace(s))
	return n, err == nil
}

// Repeated groups the responses of a workbook measured at several times
// (--times) into one analyze.Repeated per measured quantity: each unit's
// values by time, the treatment of each unit as one label. Units without a
// treatment (sealed) are refused by the caller before.
func Repeated(fl *workbook.Filled) []analyze.Repeated {
	p := fl.Layout.Plan
	tr := p.Treatments()
	var out []analyze.Repeated
	index := map[string]int{}
	for k, r := range p.Responses {
		if r.Of == "" {
			continue
		}
		g, ok := index[r.Of]
		if !ok {
			g = len(out)
			index[r.Of] = g
			rm := analyze.Repeated{Response: r.Of, Treatment: treatmentName(p)}
			for _, u := range fl.Layout.Units {
				rm.Units = append(rm.Units, u.ID)
				rm.Groups = append(rm.Groups, tr[u.Treatment].Name)
				rm.Values = append(rm.Values, nil)
			}
			out = append(out, rm)
		}
		rm := &out[g]
		rm.Times = append(rm.Times, r.Time)
		if r.TimeValue != nil {
			rm.TimeValues = append(rm.TimeValues, *r.TimeValue)
		}
		for i := range fl.Layout.Units {
			v := fl.Values[k][i]
			text := ""
			if !v.Missing {
				text = v.Text
			}
			rm.Values[i] = append(rm.Values[i], text)
		}
	}
	for i := range out {
		if len(out[i].TimeValues) != len(out[i].Times) {
			out[i].TimeValues = nil
		}
	}
	return out
}

func treatmentName(p design.Plan) string {
	var names []string
	for _, f := range p.Factors {
		names = append(names, f.Name)
	}
	return strings.Join(names, " × ")
}

// ResponseKind returns the declared kind of the plan's response name.
func ResponseKind(p *design.Plan, name string) (design.Response, bool) {
	if p == nil {
		return design.Response{}, false
	}
	for _, r := range p.Responses {
		if r.Name == name {
			return r, true
		}
	}
	return design.Response{}, false
}

// TransformNote describes the back-transformed means of a result analysed
// on a transformed scale.
func TransformNote(kind string, res *analyze.Result) string {
	if kind == "" || res == nil {
		return ""
	}
	var parts []string
	for _, gs := range res.Groups {
		// Every factor's levels, as the means table lists them.
		for _, g := range gs {
			parts = append(parts, fmt.Sprintf("%s %s %s [%s, %s]", g.Term, g.Level, trim(analyze.BackTransform(kind, g.LSMean)), trim(analyze.BackTransform(kind, g.Lower)), trim(analyze.BackTransform(kind, g.Upper))))
		}
	}
	what := map[string]string{analyze.TransformLog: "natural logarithm; back-transformed, a mean is a geometric mean and a difference a ratio",
		analyze.TransformSqrt:  "square root; back-transformed means are medians on the original scale if the roots are symmetric",
		analyze.TransformLogit: "logit; back-transformed means are proportions (medians if the logits are symmetric)"}[kind]
	return fmt.Sprintf("Analysed on the %s scale (%s). Back-transformed least-squares means with 95%% intervals: %s.", kind, what, strings.Join(parts, "; "))
}

func trim(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

// RepeatedProfiles analyses each response of fl measured at several times
// (or only response, if given) as a split plot in time
// (analyze.SplitPlotInTime), for the command and the check page alike.
func RepeatedProfiles(fl *workbook.Filled, response string, alpha float64) ([]report.Profiles, error) {
	var out []report.Profiles
	for _, rm := range Repeated(fl) {
		if response != "" && rm.Response != response {
			continue
		}
		res, err := analyze.SplitPlotInTime(rm, alpha)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", rm.Response, err)
		}
		out = append(out, report.Profiles{RMResult: res})
	}
	return out, nil
}
