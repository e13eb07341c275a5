package workbook

import (
	"bytes"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

func scanLayout(t testing.TB, blind bool, subsamples int) design.Layout {
	t.Helper()
	lo, hi := 0.0, 200.0
	p := design.Plan{Title: "scans test", Design: design.RCBD,
		Factors: []design.Factor{{Name: "feed", Levels: []string{"F0", "F1", "F2"}}},
		Reps:    []int{1, 1, 1}, Blocks: 2, BlockName: "bench", Seed: 3, Blind: blind, Subsamples: subsamples,
		Responses: []design.Response{{Name: "height_cm", Min: &lo, Max: &hi}, {Name: "mass_g"}}}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func TestReadScans(t *testing.T) {
	in := "\ufeffCode,Response,Value\n" +
		"allot:0123456789ab:101,height_cm,12.5\n" +
		"\n" +
		" allot:0123456789ab:102 , mass_g, 3\n" +
		"allot:0123456789ab:103,height_cm\n" +
		"\"allot:0123456789ab:201\",height_cm,\"7,5\",extra\n"
	got, err := ReadScans(strings.NewReader(in), "scans.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := []Scan{
		{Line: 2, Code: "allot:0123456789ab:101", Response: "height_cm", Value: "12.5", Fields: 3},
		{Line: 4, Code: "allot:0123456789ab:102", Response: "mass_g", Value: "3", Fields: 3},
		{Line: 5, Code: "allot:0123456789ab:103", Response: "height_cm", Fields: 2},
		{Line: 6, Code: "allot:0123456789ab:201", Response: "height_cm", Value: "7,5", Fields: 4},
	}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("got  %v\nwant %v", got, want)
	}
	// Without a header the first row is data.
	got, err = ReadScans(strings.NewReader("allot:0123456789ab:101,height_cm,1\n"), "s.csv")
	if err != nil || len(got) != 1 || got[0].Line != 1 {
		t.Errorf("no header: %v %v", got, err)
	}
	_, err = ReadScans(strings.NewReader("a,b,c\n\"unclosed,x,y\n"), "bad.csv")
	var fe *FileError
	if !errors.As(err, &fe) || !strings.Contains(fe.Msg, "line 2") {
		t.Errorf("bad CSV: %v", err)
	}
}

func TestCheckScans(t *testing.T) {
	l := scanLayout(t, false, 0)
	v := l.View()
	code := func(id string) string { return design.UnitCode(v.Fingerprint, id, 0) }
	other := "allot:ffffffffffff:101"
	all := func(skip string) []Scan {
		var s []Scan
		for i, u := range l.Units {
			if u.ID != skip {
				s = append(s, Scan{Line: i + 2, Code: code(u.ID), Response: "height_cm", Value: fmt.Sprint(10 + i), Fields: 3})
			}
		}
		return s
	}
	cases := []struct {
		name    string
		scans   []Scan
		matched int
		want    []string // problems, as printed
	}{
		{"all good", all(""), 6, nil},
		{"another plan", append(all(""), Scan{Line: 9, Code: other, Response: "height_cm", Value: "1", Fields: 3}), 6,
			[]string{"error: line 9: code allot:ffffffffffff:101 belongs to another plan (fingerprint ffffffffffff…, this plan's is " + v.Short() + "…)"}},
		{"unknown unit", append(all(""), Scan{Line: 9, Code: code("999"), Response: "height_cm", Value: "1", Fields: 3}), 6,
			[]string{`error: line 9: code ` + code("999") + ` names unit "999", which is not in the plan`}},
		{"not a code", append(all(""), Scan{Line: 9, Code: "4006381333931", Response: "height_cm", Value: "1", Fields: 3}), 6,
			[]string{`error: line 9: "4006381333931" is not an allot unit code`}},
		{"wrong width", append(all(""), Scan{Line: 9, Code: code("101"), Response: "height_cm", Fields: 2}), 6,
			[]string{"error: line 9: 2 field(s) where 3 belong"}},
		{"unknown response", append(all(""), Scan{Line: 9, Code: code("101"), Response: "hieght", Value: "1", Fields: 3}), 6,
			[]string{`error: line 9 (unit 101): response "hieght" is not in the plan (responses: height_cm, mass_g)`}},
		{"not a number", append(all(""), Scan{Line: 9, Code: code("101"), Response: "mass_g", Value: "NaN", Fields: 3}), 6,
			// mass_g was scanned for no unit: no gap is reported for it.
			[]string{`error: line 9 (unit 101): "NaN" is not a number`}},
		{"out of range", append(all("101"), Scan{Line: 9, Code: code("101"), Response: "height_cm", Value: "250", Fields: 3}), 5,
			[]string{"error: line 9 (unit 101): 250 is outside the declared range 0..200 for height_cm", "warning: height_cm: 1 of 6 units have no scan: 101"}},
		{"twice, same value", append(all(""), Scan{Line: 9, Code: code("101"), Response: "height_cm", Value: "10", Fields: 3}), 6,
			[]string{"warning: line 9 (unit 101): height_cm scanned again with the same value as on line 2"}},
		{"twice, other value", append(all(""), Scan{Line: 9, Code: code("101"), Response: "height_cm", Value: "11", Fields: 3}), 6,
			[]string{"error: line 9 (unit 101): height_cm scanned again: 11 here, 10 on line 2"}},
		{"subsample of a plan without", append(all(""), Scan{Line: 9, Code: design.UnitCode(v.Fingerprint, "101", 2), Response: "height_cm", Value: "1", Fields: 3}), 6,
			[]string{"error: line 9 (unit 101): the code names subsample 2, but the plan records one measurement per unit"}},
		{"unit missing", all("203"), 5, []string{"warning: height_cm: 1 of 6 units have no scan: 203"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res := CheckScans("scans.csv", c.scans, v, nil, ReadOptions{})
			var got []string
			for _, p := range res.Problems {
				got = append(got, p.String())
			}
			if len(got) != len(c.want) {
				t.Fatalf("problems:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(c.want, "\n"))
			}
			for i := range got {
				if !strings.HasPrefix(got[i], c.want[i]) {
					t.Errorf("problem %d:\n%s\nwant prefix\n%s", i, got[i], c.want[i])
				}
			}
			if res.Matched != c.matched {
				t.Errorf("matched %d, want %d", res.Matched, c.matched)
			}
		})
	}
}

// TestCheckScansAgainstWorkbook: scanned values are compared with the
// filled workbook's, and subsample codes with its subsample rows; a blind
// workbook read without its key is matched by its full fingerprint.
func TestCheckScansAgainstWorkbook(t *testing.T) {
	for _, blind := range []bool{false, true} {
		l := scanLayout(t, blind, 2)
		path := filepath.Join(t.TempDir(), "trial.xlsx")
		if err := Write(path, l, Meta{Version: "test"}, false); err != nil {
			t.Fatal(err)
		}
		v, err := ReadView(path)
		if err != nil {
			t.Fatal(err)
		}
		if v.Fingerprint != l.Plan.Fingerprint() {
			t.Fatalf("blind %v: view fingerprint %s, want %s", blind, v.Fingerprint, l.Plan.Fingerprint())
		}
		for i, u := range l.Units {
			if v.Shown[i] != l.Label(u) {
				t.Errorf("blind %v: unit %s shows %q, want %q", blind, u.ID, v.Shown[i], l.Label(u))
			}
		}
		// Type a height into every subsample row, as a person would.
		f, err := excelize.OpenFile(path)
		if err != nil {
			t.Fatal(err)
		}
		nd := layoutColumns(l.Plan).designCount(l.Plan)
		for r := 2; r <= 1+2*len(l.Units); r++ {
			f.SetCellFloat(SheetEntry, cell(nd+1, r), float64(20+r), -1, 64)
		}
		filledPath := filepath.Join(filepath.Dir(path), "filled.xlsx")
		if err := f.SaveAs(filledPath); err != nil {
			t.Fatal(err)
		}
		fl, err := Read(filledPath, ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		u := l.Units[0]
		wb := fl.Subs[0][0][1].Text // subsample 2 of the first unit
		in := fmt.Sprintf("code,response,value\n%s,height_cm,%s\n%s,height_cm,99\n%s,height_cm,5\n",
			design.UnitCode(v.Fingerprint, u.ID, 1), fl.Subs[0][0][0].Text, design.UnitCode(v.Fingerprint, u.ID, 2), design.UnitCode(v.Fingerprint, u.ID, 0))
		scans, err := ReadScans(bytes.NewBufferString(in), "scans.csv")
		if err != nil {
			t.Fatal(err)
		}
		res := CheckScans("scans.csv", scans, v, fl, ReadOptions{})
		var got []string
		for _, p := range res.Problems {
			got = append(got, p.String())
		}
		text := strings.Join(got, "\n")
		for _, want := range []string{
			fmt.Sprintf("error: line 3 (unit %s): height_cm of subsample 2 is 99 in the scan but %s in the workbook (cell ", u.ID, wb),
			fmt.Sprintf("error: line 4 (unit %s): the code names the unit but not its subsample (the plan records 2 per unit)", u.ID),
		} {
			if !strings.Contains(text, want) {
				t.Errorf("blind %v: missing %q in\n%s", blind, want, text)
			}
		}
		if res.Matched != 2 || res.Errors() != 2 {
			t.Errorf("blind %v: matched %d, errors %d:\n%s", blind, res.Matched, res.Errors(), text)
		}
	}
}

// FuzzReadScans: never panics; every row read has a positive line number
// and keeps the field count it had.
func FuzzReadScans(f *testing.F) {
	f.Add("code,response,value\nallot:0123456789ab:101,h,1\n")
	f.Add("\"a\nb\",c\n,,\n")
	f.Fuzz(func(t *testing.T, in string) {
		scans, err := ReadScans(strings.NewReader(in), "f.csv")
		if err != nil {
			return
		}
		for _, s := range scans {
			if s.Line < 1 || s.Fields < 1 {
				t.Fatalf("row %+v", s)
			}
		}
	})
}
