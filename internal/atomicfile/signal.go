package atomicfile

import (
	"os"
	"os/signal"
	"syscall"
)

// removeOnSignal removes tmp if the process is interrupted (SIGINT) or
// terminated (SIGTERM) before stop is called, then delivers the signal
// again so that the process ends as it would have (or, when the program
// handles the signal itself, carries on without the temporary).
func removeOnSignal(tmp string) (stop func()) {
	ch := make(chan os.Signal, 1)
	done := make(chan struct{})
	signal.Notify(ch, os.Interrupt, syscall.SIGTERM)
	go func() {
		select {
		case sig := <-ch:
			os.Remove(tmp)
			signal.Stop(ch)
			if p, err := os.FindProcess(os.Getpid()); err != nil || p.Signal(sig) != nil {
				os.Exit(130)
			}
		case <-done:
		}
	}()
	return func() {
		signal.Stop(ch)
		close(done)
	}
}
