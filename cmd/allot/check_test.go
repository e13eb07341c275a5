package main

import (
	"archive/zip"
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

func TestCheckParse(t *testing.T) {
	var got *checkOptions
	cmd := newCheckCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *checkOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"data.csv", "--plan", "layout.json", "--decimal-comma", "--key", "k.json", "--json", "--range", "h=0..300", "--range", "w=1..", "--convert"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.file != "data.csv" || got.plan != "layout.json" || !got.decimalComma || got.key != "k.json" || !got.json ||
		strings.Join(got.ranges, " ") != "h=0..300 w=1.." || !got.convert {
		t.Errorf("%+v", got)
	}
}

// layoutFiles writes a small layout as workbook, CSV and JSON into dir.
func layoutFiles(t *testing.T, dir string) {
	t.Helper()
	for _, ext := range []string{"xlsx", "csv", "json"} {
		code, _, errs := runArgs(t, "layout", "--title", "Check test", "--factor", "feed=F0,F1,F2", "--design", "rcbd", "--blocks", "2",
			"--block-name", "bench", "--seed", "5", "--response", "height_cm:0..100", "-o", filepath.Join(dir, "trial."+ext))
		if code != 0 {
			t.Fatal(errs)
		}
	}
}

func TestCheckRun(t *testing.T) {
	dir := t.TempDir()
	layoutFiles(t, dir)
	wb := filepath.Join(dir, "trial.xlsx")
	f, err := excelize.OpenFile(wb)
	if err != nil {
		t.Fatal(err)
	}
	for r := 2; r <= 7; r++ {
		f.SetCellFloat("Entry", "E"+string(rune('0'+r)), float64(10*r)+0.5, -1, 64)
	}
	f.SetCellStr("Entry", "E4", "n/a")
	f.SaveAs(wb)

	code, out, _ := runArgs(t, "check", wb)
	want := `trial.xlsx: plan "Check test"`
	if code != exitFailed || !strings.Contains(out, want) || !strings.Contains(out, `error: sheet "Entry" cell E4 (unit 103): "n/a" is not a number`) || !strings.Contains(out, "Result: 1 error and 1 warning") {
		t.Errorf("exit %d:\n%s", code, out)
	}
	golden(t, "check_workbook", strings.ReplaceAll(out, dir+string(os.PathSeparator), ""))

	// CSV with its layout.
	csvPath := filepath.Join(dir, "trial.csv")
	b, _ := os.ReadFile(csvPath)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	for i := 1; i < len(lines); i++ {
		lines[i] = strings.Replace(lines[i], ",,", ",12,5,", 1)
	}
	os.WriteFile(csvPath, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	code, out, _ = runArgs(t, "check", csvPath, "--plan", filepath.Join(dir, "trial.json"))
	if code != exitFailed || !strings.Contains(out, "line 2 has 9 fields where the header has 8") {
		// "12,5" unquoted in a comma-separated file is two fields: a
		// ragged row, reported by its line.
		t.Errorf("csv: exit %d\n%s", code, out)
	}
	// The same values in the semicolon dialect of decimal-comma locales,
	// with a byte-order mark and CRLF line ends.
	for i := range lines {
		lines[i] = strings.Replace(strings.ReplaceAll(strings.Replace(lines[i], ",12,5,", ",12|5,", 1), ",", ";"), "|", ",", 1)
	}
	os.WriteFile(csvPath, []byte("\xEF\xBB\xBF"+strings.Join(lines, "\r\n")+"\r\n"), 0o644)
	code, out, _ = runArgs(t, "check", csvPath, "--plan", filepath.Join(dir, "trial.json"), "--decimal-comma")
	if code != 0 || !strings.Contains(out, "height_cm: 6 of 6 units have a value") {
		t.Errorf("semicolon csv: exit %d\n%s", code, out)
	}
	code, out, _ = runArgs(t, "check", csvPath)
	if code != exitUsage {
		t.Errorf("csv without --plan: exit %d %s", code, out)
	}
}

func TestCheckBadInput(t *testing.T) {
	dir := t.TempDir()
	junk := filepath.Join(dir, "junk.xlsx")
	os.WriteFile(junk, []byte("not a workbook"), 0o644)
	// An OpenDocument file: a zip whose "mimetype" names the format.
	ods := filepath.Join(dir, "x.ods")
	{
		out, _ := os.Create(ods)
		zw := zip.NewWriter(out)
		w, _ := zw.Create("mimetype")
		w.Write([]byte("application/vnd.oasis.opendocument.spreadsheet"))
		zw.Close()
		out.Close()
	}
	tests := []struct {
		args []string
		want string
	}{
		{[]string{junk}, "cannot be read as an .xlsx workbook"},
		{[]string{filepath.Join(dir, "x.txt")}, "give a workbook (.xlsx) or a CSV file"},
		{[]string{ods}, "is an OpenDocument spreadsheet (.ods); allot reads .xlsx: save a copy as Excel 2007-365 (.xlsx)"},
		{[]string{dir}, "is a directory, not a workbook"},
		{[]string{}, "check takes one FILE"},
		{[]string{junk, "--plan", "p.json"}, "--plan p.json: open p.json"},
		{[]string{junk, "--range", "h=5..1"}, "--range \"h=5..1\": the range is empty"},
	}
	for _, tt := range tests {
		code, _, errs := runArgs(t, append([]string{"check"}, tt.args...)...)
		if code != exitUsage || !strings.Contains(errs, tt.want) {
			t.Errorf("%v: exit %d, %q; want 2 and %q", tt.args, code, errs, tt.want)
		}
	}
}

// TestCheckRecovery: a workbook that lost its plan sheet is checked against
// --plan; a value outside the range is accepted with --range, and the JSON
// names its format.
func TestCheckRecovery(t *testing.T) {
	dir := t.TempDir()
	layoutFiles(t, dir)
	wb := filepath.Join(dir, "trial.xlsx")
	f, err := excelize.OpenFile(wb)
	if err != nil {
		t.Fatal(err)
	}
	for r := 2; r <= 7; r++ {
		f.SetCellFloat("Entry", "E"+string(rune('0'+r)), float64(10*r)+0.5, -1, 64)
	}
	f.SetCellFloat("Entry", "E3", 150, -1, 64) // the plan's range is 0..100
	f.SetCellValue("Entry", "E4", nil)
	f.SetCellStr("Entry", "F4", "lost")
	f.SetCellStr("Entry", "G4", "tray dropped")
	f.DeleteSheet("allot-data")
	f.SaveAs(wb)
	code, _, errs := runArgs(t, "check", wb)
	if code != exitUsage || !strings.Contains(errs, "--plan layout.json") {
		t.Errorf("without --plan: exit %d %s", code, errs)
	}
	plan := filepath.Join(dir, "trial.json")
	code, out, _ := runArgs(t, "check", wb, "--plan", plan)
	if code != exitFailed || !strings.Contains(out, `the hidden plan sheet "allot-data" is missing`) || !strings.Contains(out, "--range height_cm=MIN..MAX") {
		t.Errorf("with --plan: exit %d\n%s", code, out)
	}
	code, out, _ = runArgs(t, "check", wb, "--plan", plan, "--range", "height_cm=0..200", "--json")
	var m map[string]any
	if code != 0 || json.Unmarshal([]byte(out), &m) != nil || m["format"] != "allot.check/v1" || m["errors"] != 0.0 {
		t.Errorf("with --range: exit %d\n%s", code, out)
	}
	if m["lost"] != 1.0 || !strings.Contains(out, `"reason": "tray dropped"`) || !strings.Contains(out, `"cell": "Entry!F4"`) {
		t.Errorf("losses not in the JSON:\n%s", out)
	}
	if !strings.Contains(out, "given with --range, not the plan's 0..100") {
		t.Errorf("the override is not reported:\n%s", out)
	}
	code, _, errs = runArgs(t, "check", wb, "--plan", plan, "--range", "nosuch=0..1")
	if code != exitUsage || !strings.Contains(errs, "--range nosuch: the plan has no such response") {
		t.Errorf("unknown --range: exit %d %s", code, errs)
	}
	key := filepath.Join(dir, "key.json")
	if code, _, errs := runArgs(t, "layout", "--factor", "feed=F0,F1", "--blind", "--key", key, "--reps", "2", "--seed", "3"); code != 0 {
		t.Fatal(errs)
	}
	code, _, errs = runArgs(t, "check", wb, "--plan", plan, "--key", key)
	if code != exitUsage || !strings.Contains(errs, "is not blind, so it has no key") {
		t.Errorf("--key on an open layout: exit %d %s", code, errs)
	}
}
