//go:build !unix

package atomicfile

import "os"

func syncDir(string) {}

// alive reports whether a process with this id is running.
func alive(pid int) bool {
	p, err := os.FindProcess(pid)
	if err != nil {
		return false
	}
	p.Release()
	return true
}
