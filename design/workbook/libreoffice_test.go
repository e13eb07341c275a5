package workbook

import (
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// needLibreOffice returns the path of LibreOffice, or skips the test.
func needLibreOffice(t *testing.T) string {
	t.Helper()
	if testing.Short() {
		t.Skip("starts LibreOffice")
	}
	lo, err := exec.LookPath("libreoffice")
	if err != nil {
		t.Skip("libreoffice not installed (Debian package libreoffice-calc-nogui; .ci/run installs it)")
	}
	return lo
}

// TestLibreOfficeSort sorts the filled Entry sheet in LibreOffice (by the
// Treatment column, descending, header kept, through its Python bridge)
// and saves the sorted copy as .xlsx: the check accepts it and reads the
// same value for every unit.
func TestLibreOfficeSort(t *testing.T) {
	needLibreOffice(t)
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import uno").Run(); err != nil {
		t.Skip("LibreOffice's Python bridge is not installed (Debian package python3-uno; .ci/run installs it)")
	}
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	sorted := filepath.Join(t.TempDir(), "sorted.xlsx")
	cmd := exec.Command(py, filepath.Join("testdata", "lo_sort.py"), path, sorted, t.TempDir(), "3")
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("sorting in LibreOffice: %v\n%s", err, b)
	}
	want, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := Read(sorted, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(got.Problems) != 0 {
		t.Errorf("problems after sorting: %v", got.Problems)
	}
	moved := false
	for k := range want.Values {
		for i := range want.Values[k] {
			if got.Values[k][i].Text != want.Values[k][i].Text {
				t.Errorf("response %d unit %s: %q after sorting, %q before", k, l.Units[i].ID, got.Values[k][i].Text, want.Values[k][i].Text)
			}
			moved = moved || got.Values[k][i].Cell != want.Values[k][i].Cell
		}
	}
	if !moved {
		t.Error("no row moved: the sort did not happen")
	}
}

// TestPrintedPages exports a 640-unit non-ASCII workbook to PDF with
// LibreOffice and reads the pages back with pdftotext (poppler-utils):
// every Entry page has the Unit and Notes columns (one page width, header
// repeated), every Map page treatment names, every page the plan ID; the
// Study sheet takes one page.
func TestPrintedPages(t *testing.T) {
	lo := needLibreOffice(t)
	pdftotext, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("pdftotext not installed (Debian package poppler-utils; .ci/run installs it)")
	}
	l := unicodeLayout(t, 160)
	dir := t.TempDir()
	path := filepath.Join(dir, "print.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+t.TempDir(), "--convert-to", "pdf", "--outdir", dir, path)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("libreoffice: %v\n%s", err, b)
	}
	pdf := filepath.Join(dir, "print.pdf")
	all, err := exec.Command(pdftotext, "-layout", pdf, "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	pages := strings.Split(strings.TrimRight(string(all), "\f\n"), "\f")
	if len(pages) < 3 {
		t.Fatalf("%d pages", len(pages))
	}
	fp := "Plan " + l.Plan.Fingerprint()[:12]
	count := map[string]int{}
	for i, pg := range pages {
		n := strconv.Itoa(i + 1)
		if !strings.Contains(pg, fp) {
			t.Errorf("page %s lacks the plan ID %q", n, fp)
		}
		if !strings.Contains(pg, "Page "+n+" of "+strconv.Itoa(len(pages))) {
			t.Errorf("page %s lacks its page number", n)
		}
		switch { // the footer names the sheet; the Study text mentions the Entry sheet
		case strings.Contains(pg, "Study sheet"):
			count["Study"]++
		case strings.Contains(pg, "Entry sheet"):
			count["Entry"]++
			if !strings.Contains(pg, "Unit") || !strings.Contains(pg, "Notes") || !strings.Contains(pg, "hauteur_cm") {
				t.Errorf("Entry page %s lacks Unit, hauteur_cm or Notes:\n%s", n, pg)
			}
		case strings.Contains(pg, "Map sheet"):
			count["Map"]++
			if !strings.Contains(pg, "Témoin") || !strings.Contains(pg, "Phosphore-é") {
				t.Errorf("Map page %s lacks treatment names:\n%s", n, pg)
			}
		}
	}
	if count["Entry"] < 2 || count["Map"] < 2 || count["Study"] != 1 {
		t.Errorf("pages per sheet %v: want the Study sheet on one page and several Entry and Map pages", count)
	}
	os.Remove(pdf)
}

// TestConvert saves a filled workbook as .ods with LibreOffice, as a user of
// another spreadsheet program would, and reads it back through Convert.
func TestConvert(t *testing.T) {
	lo := needLibreOffice(t)
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	dir := t.TempDir()
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+t.TempDir(), "--convert-to", "ods", "--outdir", dir, path)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("libreoffice: %v\n%s", err, b)
	}
	ods := filepath.Join(dir, "trial.ods")
	if _, err := Read(ods, ReadOptions{}); err == nil || !strings.Contains(err.Error(), "--convert") {
		t.Fatalf("reading .ods: %v", err)
	}
	xlsx, err := Convert(ods, t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	fl, err := Read(xlsx, ReadOptions{})
	if err != nil || len(fl.Problems) != 0 {
		t.Fatalf("%v %v", err, fl.Problems)
	}
	if fl.Values[1][2].Text != "1000000000002.4" {
		t.Errorf("mass of unit 3 after .ods and back: %q", fl.Values[1][2].Text)
	}
}
