//go:build !linux

package atomicfile

func renameNoReplace(tmp, path string) error { return linkNoReplace(tmp, path) }
