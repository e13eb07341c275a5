// Package atomicfile writes files so that a reader never sees a half-written
// one and a user's file is never replaced by accident: the content goes to a
// temporary file in the destination's folder (named .allot-PID-*), which is
// flushed to disk and then moved to the destination. Without force the move
// refuses an existing destination atomically (renameat2 RENAME_NOREPLACE on
// Linux, renamex_np RENAME_EXCL on macOS, else a hard link, which also fails
// on an existing name), so a file created by someone else between a check
// and the move is never replaced. Only on a file system that supports none
// of these (no hard links) does it fall back to check-then-rename.
//
// New files get mode 0666 less the umask (0600 less the umask for private
// files such as blinding keys), as files made by any other program do.
//
// While a temporary exists, an interrupt (Ctrl-C) or SIGTERM removes it
// before the process ends; a run killed outright (SIGKILL, power loss) can
// leave one, and Leftovers names those of runs no longer alive so that the
// next run can tell the user.
package atomicfile

import (
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// ErrExists reports a destination that exists when force was not given.
var ErrExists = errors.New("file exists")

// TempPrefix begins the name of every temporary file.
const TempPrefix = ".allot-"

// Mode is the permission of a new file before the umask.
type Mode fs.FileMode

const (
	// ModePublic is for results: readable by others unless the umask says no.
	ModePublic Mode = 0o666
	// ModePrivate is for files only their owner may read (blinding keys).
	ModePrivate Mode = 0o600
)

// Option changes how Write creates the file.
type Option func(*Mode)

// Private makes the file readable and writable by its owner only (mode
// 0600, whatever the umask), for secrets such as an unblinding key.
func Private() Option { return func(m *Mode) { *m = ModePrivate } }

// Write calls write with a temporary file beside path and moves it to path.
// Without force an existing path is left alone and an error wrapping
// ErrExists is returned that tells the user about --force. The file gets
// mode 0666 less the umask, or 0600 with Private.
func Write(path string, force bool, write func(w io.Writer) error, opts ...Option) error {
	m := ModePublic
	for _, o := range opts {
		o(&m)
	}
	return WriteMode(path, force, m, write)
}

// WritePrivate is Write for a file only its owner may read (mode 0600).
func WritePrivate(path string, force bool, write func(w io.Writer) error) error {
	return WriteMode(path, force, ModePrivate, write)
}

// WriteMode is Write with the file's permission before the umask.
func WriteMode(path string, force bool, mode Mode, write func(w io.Writer) error) error {
	if !force {
		if _, err := os.Lstat(path); err == nil {
			return existsErr(path)
		}
	}
	f, err := createTemp(filepath.Dir(path), filepath.Ext(path), fs.FileMode(mode))
	if err != nil {
		return fmt.Errorf("cannot write beside %s: %w", path, err)
	}
	tmp := f.Name()
	stop := removeOnSignal(tmp)
	defer stop()
	fail := func(err error) error {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if err := write(f); err != nil {
		return fail(err)
	}
	if err := f.Sync(); err != nil {
		return fail(fmt.Errorf("writing %s: %w", path, err))
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if force {
		err = os.Rename(tmp, path)
	} else {
		err = renameNoReplace(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		if errors.Is(err, fs.ErrExist) {
			return existsErr(path)
		}
		return fmt.Errorf("moving the temporary file to %s: %w", path, err)
	}
	syncDir(filepath.Dir(path))
	return nil
}

// ExistsError is a destination that exists when force was not given; it
// matches ErrExists with errors.Is.
type ExistsError struct{ Path string }

func (e *ExistsError) Error() string {
	return e.Path + " already exists; choose another name or add --force to replace it"
}

// Is makes errors.Is(err, ErrExists) true.
func (e *ExistsError) Is(target error) bool { return target == ErrExists }

func existsErr(path string) error { return &ExistsError{Path: path} }

// Check reports, before any work is done, whether Write(path, force, ...)
// could succeed: the destination must not exist without force, and its
// folder must exist and take new files.
func Check(path string, force bool) error {
	if st, err := os.Stat(path); err == nil {
		if st.IsDir() {
			return fmt.Errorf("%s is a folder; give a file name", path)
		}
		if !force {
			return existsErr(path)
		}
	}
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("%s: the folder %s does not exist; create it first: %w", path, dir, fs.ErrNotExist)
	case err != nil:
		return fmt.Errorf("%s: %w", path, err)
	case !st.IsDir():
		return fmt.Errorf("%s: %s is not a folder", path, dir)
	}
	f, err := createTemp(dir, "", 0o600)
	if err != nil {
		return fmt.Errorf("%s: cannot create files in %s: %w", path, dir, err)
	}
	f.Close()
	os.Remove(f.Name())
	return nil
}

// createTemp creates a new file in dir named .allot-PID-RANDOM+ext with
// perm less the umask. (os.CreateTemp always uses 0600.)
func createTemp(dir, ext string, perm fs.FileMode) (*os.File, error) {
	if dir == "" {
		dir = "."
	}
	for range 100 {
		var r [6]byte
		if _, err := rand.Read(r[:]); err != nil {
			return nil, err
		}
		name := filepath.Join(dir, TempPrefix+strconv.Itoa(os.Getpid())+"-"+hex.EncodeToString(r[:])+ext)
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, perm)
		if errors.Is(err, fs.ErrExist) {
			continue
		}
		return f, err
	}
	return nil, errors.New("atomicfile: no free temporary name")
}

// linkNoReplace moves tmp to path unless path exists: a hard link fails on
// an existing name. Where hard links are not supported (some network and
// FAT file systems) it falls back to check-then-rename.
func linkNoReplace(tmp, path string) error {
	err := os.Link(tmp, path)
	if err == nil {
		return os.Remove(tmp)
	}
	if errors.Is(err, fs.ErrExist) {
		return err
	}
	if _, serr := os.Lstat(path); serr == nil {
		return fs.ErrExist
	}
	return os.Rename(tmp, path)
}

// Leftovers lists the temporary files in dir left by allot runs that are no
// longer running (killed before they could clean up). The caller tells the
// user; they are not removed, since they may hold the only copy of work.
func Leftovers(dir string) []string {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil
	}
	var out []string
	for _, e := range entries {
		name := e.Name()
		if !strings.HasPrefix(name, TempPrefix) || e.IsDir() {
			continue
		}
		pidText, _, ok := strings.Cut(strings.TrimPrefix(name, TempPrefix), "-")
		pid, err := strconv.Atoi(pidText)
		if ok && err == nil && (pid == os.Getpid() || alive(pid)) {
			continue
		}
		out = append(out, filepath.Join(dir, name))
	}
	return out
}
