// Package atomicfile writes files so that a reader never sees a half-written
// one and a user's file is never replaced by accident: the content goes to a
// temporary file in the destination's folder, which is then renamed over the
// destination.
package atomicfile

import (
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// ErrExists reports a destination that exists when force was not given.
var ErrExists = errors.New("file exists")

// Option changes how Write creates the file.
type Option func(*options)

type options struct{ perm os.FileMode }

// Private makes the file readable and writable by its owner only (mode
// 0600, whatever the umask), for secrets such as an unblinding key.
func Private() Option { return func(o *options) { o.perm = 0o600 } }

// Write calls write with a temporary file beside path and renames it to
// path. Without force an existing path is left alone and an error wrapping
// ErrExists is returned that tells the user about --force. The file gets
// mode 0666 less the umask, as any file the user writes, or 0600 with
// Private.
func Write(path string, force bool, write func(w io.Writer) error, opts ...Option) error {
	o := options{perm: 0o666}
	for _, opt := range opts {
		opt(&o)
	}
	if !force {
		if _, err := os.Stat(path); err == nil {
			return fmt.Errorf("%w: %s already exists; choose another name or add --force to replace it", ErrExists, path)
		}
	}
	f, err := createTemp(path, o.perm)
	if err != nil {
		return fmt.Errorf("cannot write beside %s: %w", path, err)
	}
	tmp := f.Name()
	if o.perm == 0o600 {
		// The umask could only take more away; make sure of 0600.
		if err := f.Chmod(0o600); err != nil {
			f.Close()
			os.Remove(tmp)
			return fmt.Errorf("writing %s: %w", path, err)
		}
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

// createTemp creates a new temporary file beside path with mode perm less
// the umask (os.CreateTemp always uses 0600).
func createTemp(path string, perm os.FileMode) (*os.File, error) {
	dir, ext := filepath.Dir(path), filepath.Ext(path)
	var b [8]byte
	for try := 0; ; try++ {
		if _, err := rand.Read(b[:]); err != nil {
			return nil, err
		}
		name := filepath.Join(dir, ".allot-"+hex.EncodeToString(b[:])+ext)
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, perm)
		if os.IsExist(err) && try < 100 {
			continue
		}
		return f, err
	}
}
