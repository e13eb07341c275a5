// Command allot plans, lays out and analyses comparative experiments: how many
// units, which unit gets which treatment, and what the filled-in sheet says.
package main

import (
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/cobra"
)

func main() {
	cleanup := privateTempDir()
	code := run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr)
	cleanup()
	os.Exit(code)
}

// streams carries the I/O of one invocation.
type streams struct {
	In       io.Reader
	Out, Err io.Writer
}

// run executes allot with args and returns the exit status.
func run(args []string, in io.Reader, out, errw io.Writer) int {
	s := &streams{In: in, Out: out, Err: errw}
	return execute(s, newRootCmd(s), args)
}

// execute runs the command tree root with args. A panic in a command is
// caught here, at the command boundary, and reported as an internal error
// (exit 3). (A panic in a goroutine a command starts is not caught
// here: power/sim's workers would need their own.)
func execute(s *streams, root *cobra.Command, args []string) (code int) {
	defer func() {
		if r := recover(); r != nil {
			code = internalPanic(s.Err, r)
		}
	}()
	root.SetArgs(args)
	cmd, err := root.ExecuteC()
	return exitCode(s, cmd, err)
}

// tempDirPrefix names the private temporary folder of each run.
const tempDirPrefix = "allot-run-"

// privateTempDir points TMPDIR at a folder of this run's own, so that the
// temporary files libraries make (excelize unpacks large workbook parts
// into them) go there and are removed at the end whatever happened; it
// also removes such folders left by runs that were killed. The returned
// function removes the folder.
func privateTempDir() func() {
	base := os.TempDir()
	removeDeadRunDirs(base)
	dir, err := os.MkdirTemp(base, tempDirPrefix+strconv.Itoa(os.Getpid())+"-")
	if err != nil {
		return func() {}
	}
	old, had := os.LookupEnv("TMPDIR")
	os.Setenv("TMPDIR", dir)
	return func() {
		os.RemoveAll(dir)
		if had {
			os.Setenv("TMPDIR", old)
		} else {
			os.Unsetenv("TMPDIR")
		}
	}
}

// removeDeadRunDirs removes the private temporary folders of earlier runs
// whose process no longer exists.
func removeDeadRunDirs(base string) {
	entries, err := os.ReadDir(base)
	if err != nil {
		return
	}
	for _, e := range entries {
		name := e.Name()
		if !e.IsDir() || !strings.HasPrefix(name, tempDirPrefix) {
			continue
		}
		pidText, _, _ := strings.Cut(strings.TrimPrefix(name, tempDirPrefix), "-")
		pid, err := strconv.Atoi(pidText)
		if err != nil || pid == os.Getpid() || processAlive(pid) {
			continue
		}
		os.RemoveAll(filepath.Join(base, name))
	}
}
