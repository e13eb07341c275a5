//go:build unix

package atomicfile

import (
	"errors"
	"os"
	"syscall"
)

// syncDir flushes a folder's entries, so that a moved file survives a
// crash. Best effort: some file systems refuse to sync a folder.
func syncDir(dir string) {
	d, err := os.Open(dir)
	if err != nil {
		return
	}
	d.Sync()
	d.Close()
}

// alive reports whether a process with this id is running.
func alive(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}
