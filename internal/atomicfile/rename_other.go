//go:build !linux && !darwin

package atomicfile

func renameNoReplace(tmp, path string) error { return linkNoReplace(tmp, path) }
