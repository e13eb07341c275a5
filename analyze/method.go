package analyze

import "fmt"

// Analysis methods other than the least-squares ANOVA (RunMethod).
const (
	MethodANOVA = "anova"
	MethodWelch = "welch"
	MethodRank  = "rank"
	MethodGLM   = "glm"
)

// Response kinds as declared in a plan (design.Response.Kind), repeated here
// so that analysis needs no plan.
const (
	KindCount      = "count"
	KindProportion = "proportion"
	KindScore      = "score"
)

// MethodOptions chooses how a response is analysed when it is not by the
// least-squares ANOVA: Welch's ANOVA, a rank test (Kruskal–Wallis without
// blocks, Friedman with them), or a GLM for counts and proportions.
type MethodOptions struct {
	// Method is MethodANOVA (the default), MethodWelch, MethodRank or
	// MethodGLM; Family selects the GLM's family and implies MethodGLM.
	Method string
	Family string
	// Trials holds the trials of each observation (binomial).
	Trials  []float64
	Alpha   float64
	SSType  int
	PostHoc string
}

// MethodResult holds the result of the chosen method; exactly one field is
// set.
type MethodResult struct {
	Welch *WelchResult `json:"welch,omitempty"`
	Rank  *RankResult  `json:"rank,omitempty"`
	GLM   *GLMResult   `json:"glm,omitempty"`
}

// ForKind returns the method and family that suit a declared response kind:
// counts get the Poisson GLM, proportions (successes out of trials) the
// binomial GLM, ordinal scores a rank test; a continuous response the ANOVA.
func ForKind(kind string) (method, family string) {
	switch kind {
	case KindCount:
		return MethodGLM, FamilyPoisson
	case KindProportion:
		return MethodGLM, FamilyBinomial
	case KindScore:
		return MethodRank, ""
	}
	return MethodANOVA, ""
}

// RunMethod analyses d by the method o names. MethodANOVA is not run here
// (see Run); asking for it is an error.
func RunMethod(d Data, o MethodOptions) (*MethodResult, error) {
	if o.Family != "" {
		o.Method = MethodGLM
	}
	switch o.Method {
	case MethodWelch:
		r, err := Welch(d, o.Alpha)
		if err != nil {
			return nil, err
		}
		return &MethodResult{Welch: r}, nil
	case MethodRank:
		var r *RankResult
		var err error
		if d.Block != nil {
			r, err = Friedman(d, o.Alpha)
		} else {
			r, err = KruskalWallis(d, o.Alpha)
		}
		if err != nil {
			return nil, err
		}
		return &MethodResult{Rank: r}, nil
	case MethodGLM:
		if o.Family == "" {
			return nil, fmt.Errorf("a GLM needs its family: binomial (successes out of trials) or poisson (counts)")
		}
		r, err := FitGLM(d, GLMOptions{Family: o.Family, Trials: o.Trials, SSType: o.SSType, Alpha: o.Alpha, PostHoc: o.PostHoc})
		if err != nil {
			return nil, err
		}
		return &MethodResult{GLM: r}, nil
	}
	return nil, fmt.Errorf("method %q: must be anova, welch or rank (or a GLM family: binomial, poisson)", o.Method)
}
