// Package atomicfile writes files so that a reader never sees a half-written
// one and a user's file is never replaced by accident: the content goes to a
// temporary file in the destination's folder, which is then renamed over the
// destination.
package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// ErrExists reports a destination that exists when force was not given.
var ErrExists = errors.New("file exists")

// Write calls write with a temporary file beside path and renames it to
// path. Without force an existing path is left alone and an error wrapping
// ErrExists is returned that tells the user about --force.
func Write(path string, force bool, write func(w io.Writer) error) error {
	if !force {
		if _, err := os.Stat(path); err == nil {
			return fmt.Errorf("%w: %s already exists; choose another name or add --force to replace it", ErrExists, path)
		}
	}
	f, err := os.CreateTemp(filepath.Dir(path), ".allot-*"+filepath.Ext(path))
	if err != nil {
		return fmt.Errorf("cannot write beside %s: %w", path, err)
	}
	tmp := f.Name()
	// CreateTemp makes the file private (0600); a result file is as
	// readable as any other the user writes (0644 less the umask).
	if err := f.Chmod(0o644); err != nil {
		f.Close()
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := write(f); err != nil {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("renaming the temporary file to %s: %w", path, err)
	}
	return nil
}
