package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// docsDir holds the checked-in Markdown command reference.
const docsDir = "../../docs/cli"

// TestDocsCurrent fails when docs/cli differs from what allot docs markdown
// writes today; regenerate with
//
//	go run ./cmd/allot docs markdown docs/cli --force
//
// or go test ./cmd/allot -run TestDocsCurrent -update.
func TestDocsCurrent(t *testing.T) {
	root := newRootCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	pages, err := docPages(root, "markdown", time.Time{})
	if err != nil {
		t.Fatal(err)
	}
	if *update {
		os.MkdirAll(docsDir, 0o777)
		old, _ := filepath.Glob(filepath.Join(docsDir, "*.md"))
		for _, p := range old {
			os.Remove(p)
		}
		for name, b := range pages {
			if err := os.WriteFile(filepath.Join(docsDir, name), b, 0o666); err != nil {
				t.Fatal(err)
			}
		}
	}
	onDisk, _ := filepath.Glob(filepath.Join(docsDir, "*.md"))
	for _, p := range onDisk {
		if _, ok := pages[filepath.Base(p)]; !ok {
			t.Errorf("%s documents no command any more; delete it", p)
		}
	}
	for name, want := range pages {
		got, err := os.ReadFile(filepath.Join(docsDir, name))
		if err != nil {
			t.Errorf("docs/cli/%s is missing; run go run ./cmd/allot docs markdown docs/cli --force", name)
			continue
		}
		if !bytes.Equal(got, want) {
			t.Errorf("docs/cli/%s is out of date; run go run ./cmd/allot docs markdown docs/cli --force", name)
		}
	}
}

func TestDocsRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "man")
	code, _, errs := runArgs(t, "docs", "man", dir)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	b, err := os.ReadFile(filepath.Join(dir, "allot-layout-verify.1"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), `.TH "ALLOT-LAYOUT-VERIFY" "1"`) || !strings.Contains(string(b), "Exit status") {
		t.Errorf("man page:\n%.400s", b)
	}
	// A second run refuses to replace the pages without --force.
	if code, _, errs := runArgs(t, "docs", "man", dir); code != exitUsage || !strings.Contains(errs, "--force") {
		t.Errorf("second run: exit %d, %s", code, errs)
	}
	if code, _, errs := runArgs(t, "docs", "man", dir, "--force"); code != 0 {
		t.Errorf("--force: exit %d, %s", code, errs)
	}
}
