package report

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/allotproject/allot/internal/atomicfile"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Figure is a plot ready to be written as SVG or PNG.
type Figure struct {
	Name  string // file name without extension
	Title string
	plot  *plot.Plot
	// paint draws the figure instead of plot when set (the bench map),
	// at dpi dots per inch in PNG.
	paint func(c draw.Canvas)
	dpi   int
	w, h  vg.Length
}

// Render returns the figure in format "svg", "png" or "pdf".
func (f Figure) Render(format string) ([]byte, error) {
	if f.paint != nil {
		return renderPages([]Figure{f}, format)
	}
	wt, err := f.plot.WriterTo(f.w, f.h, format)
	if err != nil {
		return nil, err
	}
	var b bytes.Buffer
	if _, err := wt.WriteTo(&b); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// InlineSVG returns the SVG without its XML prolog, for embedding in HTML.
func (f Figure) InlineSVG() (string, error) {
	b, err := f.Render("svg")
	if err != nil {
		return "", err
	}
	s := string(b)
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	return s, nil
}

// WriteFigures writes each figure as NAME.svg and NAME.png into dir.
func WriteFigures(dir string, figs []Figure, force bool) ([]string, error) {
	if err := os.MkdirAll(dir, 0o777); err != nil {
		return nil, fmt.Errorf("--plots %s: %w", dir, err)
	}
	var written []string
	for _, f := range figs {
		for _, ext := range []string{"svg", "png"} {
			b, err := f.Render(ext)
			if err != nil {
				return written, err
			}
			p := filepath.Join(dir, f.Name+"."+ext)
			if err := atomicfile.Write(p, force, func(w io.Writer) error { _, err := w.Write(b); return err }); err != nil {
				return written, err
			}
			written = append(written, p)
		}
	}
	return written, nil
}

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.Add(plotter.NewGrid())
	return p
}

// errorBars draws points with vertical interval bars.
type errorBars struct {
	xy     plotter.XYs
	lo, hi []float64
	color  color.Color
}

func (e errorBars) Plot(c draw.Canvas, p *plot.Plot) {
	tx, ty := p.Transforms(&c)
	ls := draw.LineStyle{Color: e.color, Width: vg.Points(1.5)}
	gs := draw.GlyphStyle{Color: e.color, Radius: vg.Points(3.5), Shape: draw.CircleGlyph{}}
	cap := vg.Points(4)
	for i, pt := range e.xy {
		x := tx(pt.X)
		y0, y1 := ty(e.lo[i]), ty(e.hi[i])
		c.StrokeLine2(ls, x, y0, x, y1)
		c.StrokeLine2(ls, x-cap, y0, x+cap, y0)
		c.StrokeLine2(ls, x-cap, y1, x+cap, y1)
		c.DrawGlyph(gs, vg.Point{X: x, Y: ty(pt.Y)})
	}
}

func (e errorBars) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = math.Inf(1), math.Inf(1)
	xmax, ymax = math.Inf(-1), math.Inf(-1)
	for i, pt := range e.xy {
		xmin, xmax = math.Min(xmin, pt.X), math.Max(xmax, pt.X)
		ymin, ymax = math.Min(ymin, e.lo[i]), math.Max(ymax, e.hi[i])
	}
	pad := 0.05 * (ymax - ymin) // keep whiskers off the title
	return xmin - 0.5, xmax + 0.5, ymin - pad, ymax + pad
}

// MeansFigure plots the treatment means with 95% confidence intervals, or
// for a factorial the interaction plot: the first factor along the axis,
// one line per level of the second.
func MeansFigure(a Analysis, unit string) (Figure, error) {
	t := a.Table
	ylab := t.Response
	if unit != "" {
		ylab += " (" + unit + ")"
	}
	res := a.Result
	if len(res.Cells) == 0 {
		g := res.Groups[0]
		name := t.Terms[len(t.Terms)-1].Source
		for _, term := range t.Terms {
			if !term.Block && !term.BlockInteraction {
				name = term.Source
				break
			}
		}
		p := newPlot(fmt.Sprintf("Mean %s by %s, with 95%% confidence intervals", t.Response, name), name, ylab)
		var names []string
		e := errorBars{color: palette[0]}
		for i, gr := range g {
			names = append(names, gr.Level)
			e.xy = append(e.xy, plotter.XY{X: float64(i), Y: gr.LSMean})
			e.lo, e.hi = append(e.lo, gr.Lower), append(e.hi, gr.Upper)
		}
		p.Add(e)
		p.NominalX(names...)
		return Figure{Name: "means", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch}, nil
	}
	var as, bs []string
	seenA, seenB := map[string]bool{}, map[string]bool{}
	for _, c := range res.Cells {
		if !seenA[c.A] {
			seenA[c.A] = true
			as = append(as, c.A)
		}
		if !seenB[c.B] {
			seenB[c.B] = true
			bs = append(bs, c.B)
		}
	}
	fa, fb := t.Terms[0].Source, ""
	for _, term := range t.Terms {
		if len(term.Factors) == 2 && !term.BlockInteraction {
			fa, fb = term.Factors[0], term.Factors[1]
			break
		}
	}
	p := newPlot(fmt.Sprintf("Mean %s by %s and %s (interaction plot, 95%% intervals)", t.Response, fa, fb), fa, ylab)
	ai := map[string]int{}
	for i, a := range as {
		ai[a] = i
	}
	for k, b := range bs {
		off := (float64(k) - float64(len(bs)-1)/2) * 0.08
		var xy plotter.XYs
		e := errorBars{color: palette[k%len(palette)]}
		for _, c := range res.Cells {
			if c.B != b {
				continue
			}
			pt := plotter.XY{X: float64(ai[c.A]) + off, Y: c.LSMean}
			xy = append(xy, pt)
			e.xy = append(e.xy, pt)
			e.lo, e.hi = append(e.lo, c.Lower), append(e.hi, c.Upper)
		}
		sort.Slice(xy, func(i, j int) bool { return xy[i].X < xy[j].X })
		l, err := plotter.NewLine(xy)
		if err != nil {
			return Figure{}, err
		}
		l.Color, l.Width = palette[k%len(palette)], vg.Points(1.5)
		if k%2 == 1 {
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
		p.Add(l, e)
		p.Legend.Add(fb+" = "+b, l)
	}
	p.Legend.Top = true
	p.Legend.YOffs = -vg.Points(14) // clear of the title
	p.NominalX(as...)
	return Figure{Name: "interaction", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch}, nil
}

// labelled is a scatter with some points labelled.
type labelled struct {
	xy     plotter.XYs
	labels []string
}

func (l labelled) Len() int                    { return len(l.xy) }
func (l labelled) XY(i int) (float64, float64) { return l.xy[i].X, l.xy[i].Y }
func (l labelled) Label(i int) string          { return l.labels[i] }

func flaggedLabel(a Analysis, i int) string {
	if s := a.Assumptions.DeletedAt(i); !math.IsNaN(s) && math.Abs(s) > 3 {
		for _, o := range a.Assumptions.Outliers {
			if o.Residual == a.Assumptions.ResidualAt(i) {
				if o.Unit != "" {
					return " " + o.Unit
				}
			}
		}
		return fmt.Sprintf(" #%d", i+1)
	}
	return ""
}

// maxPoints is the most points a residual figure draws.
const maxPoints = 5000

func ordinal(n int) string {
	switch {
	case n%100 >= 11 && n%100 <= 13:
		return "th"
	case n%10 == 1:
		return "st"
	case n%10 == 2:
		return "nd"
	case n%10 == 3:
		return "rd"
	}
	return "th"
}

// ResidualFigures returns residuals against fitted values and the normal
// quantile plot of the studentized residuals, with units beyond ±3 labelled.
func ResidualFigures(a Analysis, unit string) ([]Figure, error) {
	as := a.Assumptions
	t := a.Table
	ru := t.Response
	if unit != "" {
		ru += " (" + unit + ")"
	}
	// Large data sets show every k-th point (and every flagged one), so that
	// a report stays a few hundred kilobytes; the title says so.
	step := max(1, (as.Len()+maxPoints-1)/maxPoints)
	title := "Residuals against fitted values"
	if step > 1 {
		title += fmt.Sprintf(" (every %d%s of %d points)", step, ordinal(step), as.Len())
	}
	p := newPlot(title, "fitted "+ru, "residual "+ru)
	var xy plotter.XYs
	var flagged labelled
	for i := range as.Len() {
		pt := plotter.XY{X: as.FittedAt(i), Y: as.ResidualAt(i)}
		l := flaggedLabel(a, i)
		if i%step == 0 || l != "" {
			xy = append(xy, pt)
		}
		if l != "" {
			flagged.xy = append(flagged.xy, pt)
			flagged.labels = append(flagged.labels, l)
		}
	}
	sc, err := plotter.NewScatter(xy)
	if err != nil {
		return nil, err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: palette[0], Radius: vg.Points(2.5), Shape: draw.CircleGlyph{}}
	zero := plotter.NewFunction(func(float64) float64 { return 0 })
	zero.Color, zero.Dashes = grey, []vg.Length{vg.Points(3), vg.Points(3)}
	p.Add(zero, sc)
	if flagged.Len() > 0 {
		lb, err := plotter.NewLabels(flagged)
		if err != nil {
			return nil, err
		}
		for i := range lb.TextStyle {
			lb.TextStyle[i].Color = palette[1]
		}
		p.Add(lb)
	}
	figs := []Figure{{Name: "residuals", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch}}

	// Normal quantile plot with Blom's plotting positions (i − 3/8)/(n + 1/4).
	qtitle := "Normal quantile plot of studentized (deleted) residuals"
	if step > 1 {
		qtitle += fmt.Sprintf(" (every %d%s point)", step, ordinal(step))
	}
	q := newPlot(qtitle, "normal quantile", "studentized residual")
	type pair struct {
		v float64
		i int
	}
	var ps []pair
	for i := range as.Len() {
		if s := as.DeletedAt(i); !math.IsNaN(s) && !math.IsInf(s, 0) {
			ps = append(ps, pair{s, i})
		}
	}
	sort.Slice(ps, func(i, j int) bool { return ps[i].v < ps[j].v })
	n := float64(len(ps))
	var qq plotter.XYs
	var qflag labelled
	for k, pr := range ps {
		x := distuv.UnitNormal.Quantile((float64(k+1) - 0.375) / (n + 0.25))
		pt := plotter.XY{X: x, Y: pr.v}
		l := flaggedLabel(a, pr.i)
		if k%step == 0 || l != "" || k == len(ps)-1 {
			qq = append(qq, pt)
		}
		if l != "" {
			qflag.xy = append(qflag.xy, pt)
			qflag.labels = append(qflag.labels, l)
		}
	}
	if len(qq) > 0 {
		qs, err := plotter.NewScatter(qq)
		if err != nil {
			return nil, err
		}
		qs.GlyphStyle = draw.GlyphStyle{Color: palette[0], Radius: vg.Points(2.5), Shape: draw.CircleGlyph{}}
		ref := plotter.NewFunction(func(x float64) float64 { return x })
		ref.Color = grey
		q.Add(ref, qs)
		if qflag.Len() > 0 {
			lb, err := plotter.NewLabels(qflag)
			if err != nil {
				return nil, err
			}
			q.Add(lb)
		}
	}
	figs = append(figs, Figure{Name: "normal-quantiles", Title: q.Title.Text, plot: q, w: 6 * vg.Inch, h: 4.5 * vg.Inch})
	return figs, nil
}

// AnalysisFigures returns the figures of one analysis: means (or the
// interaction plot), residuals against fitted values and the normal
// quantile plot, named after the response.
func AnalysisFigures(a Analysis, unit string) ([]Figure, error) {
	m, err := MeansFigure(a, unit)
	if err != nil {
		return nil, err
	}
	r, err := ResidualFigures(a, unit)
	if err != nil {
		return nil, err
	}
	figs := append([]Figure{m}, r...)
	for i := range figs {
		figs[i].Name = a.Table.Response + "-" + figs[i].Name
	}
	return figs, nil
}
