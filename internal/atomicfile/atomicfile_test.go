package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	put := func(s string) func(io.Writer) error {
		return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
	}
	if err := Write(p, false, put("one")); err != nil {
		t.Fatal(err)
	}
	if err := Write(p, false, put("two")); !errors.Is(err, ErrExists) {
		t.Errorf("second write without force: %v", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "one" {
		t.Errorf("file replaced: %q", b)
	}
	// A failing writer leaves the old file and no temporary behind.
	if err := Write(p, true, func(io.Writer) error { return errors.New("disk full") }); err == nil {
		t.Error("writer error lost")
	}
	if b, _ := os.ReadFile(p); string(b) != "one" {
		t.Errorf("failed write changed the file: %q", b)
	}
	if err := Write(p, true, put("three")); err != nil {
		t.Fatal(err)
	}
	entries, _ := os.ReadDir(dir)
	st, _ := os.Stat(p)
	if len(entries) != 1 || st.Mode().Perm()&0o044 == 0 {
		t.Errorf("entries %v, mode %v", entries, st.Mode())
	}
}

func TestModes(t *testing.T) {
	dir := t.TempDir()
	put := func(w io.Writer) error { _, err := io.WriteString(w, "x"); return err }
	old := syscall.Umask(0o027)
	defer syscall.Umask(old)
	pub, key := filepath.Join(dir, "out.txt"), filepath.Join(dir, "key.json")
	if err := Write(pub, false, put); err != nil {
		t.Fatal(err)
	}
	if err := Write(key, false, put, Private()); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		path string
		want os.FileMode
	}{{pub, 0o640}, {key, 0o600}} { // 0666 less umask 027; the key always 0600
		st, err := os.Stat(c.path)
		if err != nil {
			t.Fatal(err)
		}
		if got := st.Mode().Perm(); got != c.want {
			t.Errorf("%s: mode %o, want %o", c.path, got, c.want)
		}
	}
}
