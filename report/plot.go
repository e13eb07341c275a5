package report

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/power"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// palette is the Okabe–Ito colour-blind-safe set (Okabe and Ito 2008,
// "Color Universal Design"): blue, vermillion, bluish green, reddish
// purple, sky blue, orange, yellow, and black last.
var palette = [...]color.RGBA{
	{0x00, 0x72, 0xB2, 0xff},
	{0xD5, 0x5E, 0x00, 0xff},
	{0x00, 0x9E, 0x73, 0xff},
	{0xCC, 0x79, 0xA7, 0xff},
	{0x56, 0xB4, 0xE9, 0xff},
	{0xE6, 0x9F, 0x00, 0xff},
	{0xF0, 0xE4, 0x42, 0xff},
	{0x00, 0x00, 0x00, 0xff},
}

var grey = color.RGBA{0x55, 0x55, 0x55, 0xff}

// PowerCurve writes power against n for the series to path (.svg or .png,
// by extension), with the target power and the answer's n marked. An
// existing file is replaced only with force.
func PowerCurve(path string, series []power.Series, a power.Answer, force bool) error {
	return PowerCurveFor(path, series, Size{Answer: a}, force)
}

// PowerCurveFor is PowerCurve in the study's words: the x axis counts
// units (animals, plants) per group or blocks (litters, benches) with
// whole-number ticks, the planned curve is solid, each extra curve is
// dashed and labelled with what it is, and the target power and the chosen
// n are marked.
func PowerCurveFor(path string, series []power.Series, sz Size, force bool) error {
	ext := strings.TrimPrefix(strings.ToLower(filepath.Ext(path)), ".")
	if ext != "svg" && ext != "png" {
		return fmt.Errorf("--curve %s: the file name must end in .svg or .png", path)
	}
	fig, err := PowerCurveFigure(series, sz)
	if err != nil {
		return err
	}
	b, err := fig.Render(ext)
	if err != nil {
		return err
	}
	return atomicfile.Write(path, force, func(w io.Writer) error {
		_, err := w.Write(b)
		return err
	})
}

// PowerCurveFigure draws power against n for the series in the study's
// words, with the target power and the answer's n marked (the figure
// PowerCurveFor writes).
func PowerCurveFigure(series []power.Series, sz Size) (Figure, error) {
	a := sz.Answer
	p := plot.New()
	p.Title.Text = fmt.Sprintf("Power of the %s (alpha %s)", a.TestName, short(a.Alpha))
	p.X.Label.Text = sz.nUnit()
	if sz.Response != "" {
		p.Title.Text += " — " + sz.Response
	}
	p.Y.Label.Text = "power (probability of a significant result)"
	p.Y.Min, p.Y.Max = 0, 1
	p.X.Tick.Marker = integerTicks{}
	p.Add(plotter.NewGrid())
	for i, s := range series {
		xy := make(plotter.XYs, len(s.N))
		for j := range s.N {
			xy[j].X, xy[j].Y = float64(s.N[j]), s.Power[j]
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return Figure{}, err
		}
		l.Color = palette[i%len(palette)]
		l.Width = vg.Points(2)
		if i > 0 {
			l.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
			l.Width = vg.Points(1.5)
		}
		p.Add(l)
		p.Legend.Add(s.Label, l)
	}
	target := plotter.NewFunction(func(float64) float64 { return a.Target })
	target.Color, target.Dashes = grey, []vg.Length{vg.Points(2), vg.Points(2)}
	p.Add(target)
	p.Legend.Add(fmt.Sprintf("target power %s", fixed(a.Target, 2)), target)
	if a.N > 0 {
		mark, err := plotter.NewLine(plotter.XYs{{X: float64(a.N), Y: 0}, {X: float64(a.N), Y: 1}})
		if err != nil {
			return Figure{}, err
		}
		mark.Color, mark.Dashes = grey, []vg.Length{vg.Points(1), vg.Points(3)}
		p.Add(mark)
		p.Legend.Add(fmt.Sprintf("chosen n = %d", a.N), mark)
	}
	// Bottom right, where rising power curves leave the plot empty; one
	// entry per line, spaced by the legend's own padding.
	p.Legend.Top, p.Legend.Left = false, false
	p.Legend.XOffs, p.Legend.YOffs = -vg.Points(6), vg.Points(30)
	p.Legend.Padding = vg.Points(2)
	p.Legend.ThumbnailWidth = vg.Points(24)
	return Figure{Name: "power-curve", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch}, nil
}

// integerTicks labels whole numbers only, about eight of them, at steps of
// 1, 2 or 5 times a power of ten.
type integerTicks struct{}

func (integerTicks) Ticks(min, max float64) []plot.Tick {
	span := max - min
	step := 1.0
	for _, m := range []float64{1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000, 1e5, 2e5, 5e5, 1e6} {
		step = m
		if span/m <= 8 {
			break
		}
	}
	var out []plot.Tick
	for v := math.Ceil(min/step) * step; v <= max; v += step {
		out = append(out, plot.Tick{Value: v, Label: strconv.Itoa(int(v))})
	}
	return out
}
