//go:build unix

package atomicfile

import (
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

func TestModeHonoursUmask(t *testing.T) {
	old := syscall.Umask(0o027)
	defer syscall.Umask(old)
	dir := t.TempDir()
	pub, priv := filepath.Join(dir, "result.json"), filepath.Join(dir, "key.json")
	if err := Write(pub, false, put("{}")); err != nil {
		t.Fatal(err)
	}
	if err := WritePrivate(priv, false, put("{}")); err != nil {
		t.Fatal(err)
	}
	for _, tt := range []struct {
		path string
		want os.FileMode
	}{{pub, 0o640}, {priv, 0o600}} {
		st, err := os.Stat(tt.path)
		if err != nil {
			t.Fatal(err)
		}
		if st.Mode().Perm() != tt.want {
			t.Errorf("%s: mode %v, want %v", filepath.Base(tt.path), st.Mode().Perm(), tt.want)
		}
	}
}
