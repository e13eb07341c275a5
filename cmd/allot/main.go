// Command allot plans, lays out and analyses comparative experiments: how many
// units, which unit gets which treatment, and what the filled-in sheet says.
package main

import (
	"io"
	"os"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// streams carries the I/O of one invocation.
type streams struct {
	In       io.Reader
	Out, Err io.Writer
}

// run executes allot with args and returns the exit status.
func run(args []string, in io.Reader, out, errw io.Writer) int {
	s := &streams{In: in, Out: out, Err: errw}
	root := newRootCmd(s)
	root.SetArgs(args)
	cmd, err := root.ExecuteC()
	return exitCode(s, cmd, err)
}
