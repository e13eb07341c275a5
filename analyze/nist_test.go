package analyze

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/column"
)

// nistCase is a converted NIST StRD one-way ANOVA dataset.
type nistCase struct {
	cert   map[string]float64
	groups []string
	values []string
}

func readNIST(t testing.TB, name string) nistCase {
	t.Helper()
	f, err := os.Open("../testdata/nist/" + name + ".txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	c := nistCase{cert: map[string]float64{}}
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<22)
	inData := false
	for sc.Scan() {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "#"):
		case line == "data":
			inData = true
		case inData:
			fs := strings.Fields(line)
			for _, v := range fs[1:] {
				c.groups = append(c.groups, fs[0])
				c.values = append(c.values, v)
			}
		default:
			fs := strings.Fields(line)
			v, err := strconv.ParseFloat(fs[1], 64)
			if err != nil {
				t.Fatal(err)
			}
			c.cert[fs[0]] = v
		}
	}
	return c
}

// lre is the log relative error, the number of correct significant digits
// (McCullough 1998, "Assessing the reliability of statistical software",
// The American Statistician 52(4) 358–366), capped at 15.
func lre(got, want float64) float64 {
	if got == want {
		return 15
	}
	if want == 0 {
		return -math.Log10(math.Abs(got))
	}
	return math.Min(15, -math.Log10(math.Abs(got-want)/math.Abs(want)))
}

// Source: shared/reference/nist-anova/*.dat (NIST StRD, certified values,
// converted to testdata/nist/*.txt by testdata/nist/convert.py). Every
// certified value must have LRE ≥ 12.
func TestNIST(t *testing.T) {
	for _, name := range []string{"SiRstv", "SmLs01", "SmLs02", "SmLs03", "AtmWtAg", "SmLs04", "SmLs05", "SmLs06", "SmLs07", "SmLs08", "SmLs09"} {
		t.Run(name, func(t *testing.T) {
			c := readNIST(t, name)
			tab, err := Fit(Data{
				Response: "y",
				Values:   column.Of(c.values),
				Factors:  []Column{{Name: "treatment", Values: column.Of(c.groups)}},
			}, Options{})
			if err != nil {
				t.Fatal(err)
			}
			b := tab.Terms[0]
			checks := []struct {
				what      string
				got, want float64
			}{
				{"between SS", b.SS, c.cert["between_ss"]},
				{"between MS", b.MS, c.cert["between_ms"]},
				{"F", b.F, c.cert["f"]},
				{"within SS", tab.Residual.SS, c.cert["within_ss"]},
				{"within MS", tab.Residual.MS, c.cert["within_ms"]},
				{"R²", tab.R2, c.cert["r2"]},
				{"residual SD", tab.ResidSD, c.cert["resid_sd"]},
			}
			if b.DF != int(c.cert["between_df"]) || tab.Residual.DF != int(c.cert["within_df"]) {
				t.Errorf("df %d/%d, certified %g/%g", b.DF, tab.Residual.DF, c.cert["between_df"], c.cert["within_df"])
			}
			worst := 15.0
			for _, ch := range checks {
				l := lre(ch.got, ch.want)
				worst = math.Min(worst, l)
				if l < 12 {
					t.Errorf("%s = %.15e, certified %.15e: LRE %.1f < 12", ch.what, ch.got, ch.want, l)
				}
			}
			t.Logf("%s: minimum LRE %.1f", name, worst)
		})
	}
}
