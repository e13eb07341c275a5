package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

func put(s string) func(io.Writer) error {
	return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
}

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	if err := Write(p, false, put("one")); err != nil {
		t.Fatal(err)
	}
	err := Write(p, false, put("two"))
	var ee *ExistsError
	if !errors.Is(err, ErrExists) || !errors.As(err, &ee) || ee.Path != p || !strings.Contains(err.Error(), "--force") {
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
	if b, _ := os.ReadFile(p); string(b) != "three" {
		t.Errorf("forced write: %q", b)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("entries %v", entries)
	}
}

// TestNoReplaceRace: writers racing for one new name without force: one
// wins, every other gets ErrExists, and the file holds the winner's text
// whole. A check-then-rename would let several "win" in turn.
func TestNoReplaceRace(t *testing.T) {
	for round := range 20 {
		p := filepath.Join(t.TempDir(), "race.txt")
		const n = 8
		errs := make([]error, n)
		var wg sync.WaitGroup
		start := make(chan struct{})
		for i := range n {
			wg.Add(1)
			go func() {
				defer wg.Done()
				<-start
				errs[i] = Write(p, false, put(strings.Repeat(fmt.Sprint(i), 1000)))
			}()
		}
		close(start)
		wg.Wait()
		won := -1
		for i, err := range errs {
			switch {
			case err == nil && won >= 0:
				t.Fatalf("round %d: writers %d and %d both wrote %s", round, won, i, p)
			case err == nil:
				won = i
			case !errors.Is(err, ErrExists):
				t.Fatalf("round %d: writer %d: %v", round, i, err)
			}
		}
		b, _ := os.ReadFile(p)
		if won < 0 || string(b) != strings.Repeat(fmt.Sprint(won), 1000) {
			t.Fatalf("round %d: winner %d, file %.20q", round, won, b)
		}
		if m, _ := filepath.Glob(filepath.Join(filepath.Dir(p), TempPrefix+"*")); len(m) > 0 {
			t.Fatalf("temporaries left: %v", m)
		}
	}
}

func TestCheck(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "a.html")
	if err := Check(p, false); err != nil {
		t.Errorf("new file: %v", err)
	}
	os.WriteFile(p, []byte("x"), 0o644)
	if err := Check(p, false); !errors.Is(err, ErrExists) {
		t.Errorf("existing file: %v", err)
	}
	if err := Check(p, true); err != nil {
		t.Errorf("existing file with force: %v", err)
	}
	if err := Check(filepath.Join(dir, "missing", "a.html"), false); !errors.Is(err, os.ErrNotExist) || !strings.Contains(err.Error(), "does not exist") {
		t.Errorf("missing folder: %v", err)
	}
	if err := Check(dir, true); err == nil {
		t.Error("a folder accepted as a file")
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("Check left files: %v", entries)
	}
}

func TestLeftovers(t *testing.T) {
	dir := t.TempDir()
	mine := filepath.Join(dir, fmt.Sprintf("%s%d-aaaa.xlsx", TempPrefix, os.Getpid()))
	dead := filepath.Join(dir, TempPrefix+"999999999-bbbb.xlsx")
	old := filepath.Join(dir, TempPrefix+"123456.json") // an older naming, no process id
	for _, p := range []string{mine, dead, old, filepath.Join(dir, "trial.xlsx")} {
		os.WriteFile(p, nil, 0o644)
	}
	got := Leftovers(dir)
	if len(got) != 2 || got[0] != old || got[1] != dead {
		t.Errorf("Leftovers = %v, want [%s %s]", got, old, dead)
	}
}

// TestSignalRemovesTemporary runs a helper process that is writing a file
// and terminates it: the temporary must be gone.
func TestSignalRemovesTemporary(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("no SIGTERM on Windows")
	}
	if dir := os.Getenv("ATOMICFILE_HELPER_DIR"); dir != "" {
		Write(filepath.Join(dir, "slow.txt"), false, func(w io.Writer) error {
			io.WriteString(w, "partial")
			fmt.Println("writing")
			time.Sleep(time.Minute)
			return nil
		})
		os.Exit(0)
	}
	for _, sig := range []os.Signal{syscall.SIGTERM, os.Interrupt} {
		dir := t.TempDir()
		cmd := exec.Command(os.Args[0], "-test.run=^TestSignalRemovesTemporary$")
		cmd.Env = append(os.Environ(), "ATOMICFILE_HELPER_DIR="+dir)
		out, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		buf := make([]byte, 7)
		if _, err := io.ReadFull(out, buf); err != nil || string(buf) != "writing" {
			cmd.Process.Kill()
			t.Fatalf("helper did not start writing: %q %v", buf, err)
		}
		if m, _ := filepath.Glob(filepath.Join(dir, TempPrefix+"*")); len(m) != 1 {
			t.Fatalf("%v: no temporary while writing: %v", sig, m)
		}
		cmd.Process.Signal(sig)
		err = cmd.Wait()
		if err == nil {
			t.Errorf("%v: the helper carried on", sig)
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 0 {
			t.Errorf("%v: left %v", sig, entries)
		}
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
