//go:build !unix

package main

import "os"

// processAlive reports whether a process with this id exists (FindProcess
// opens the process on Windows and fails when there is none).
func processAlive(pid int) bool {
	p, err := os.FindProcess(pid)
	if err != nil {
		return false
	}
	p.Release()
	return true
}
