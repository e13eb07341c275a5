package bench

import (
	"bytes"
	"os"
	"runtime"
	"runtime/debug"
	"strconv"
	"testing"
)

// peakRSS measures the peak resident memory of the work between its start
// and report, as /usr/bin/time reports it for the command: it returns the
// collected heap to the system, resets the kernel's high-water mark
// (/proc/self/clear_refs, Linux) and reads it back afterwards (VmHWM). The
// test binary's own footprint (code, runtime) is included, as the
// command's is. Elsewhere it measures nothing.
type peakRSS struct{ ok bool }

func startPeak() peakRSS {
	runtime.GC()
	debug.FreeOSMemory()
	err := os.WriteFile("/proc/self/clear_refs", []byte("5"), 0)
	return peakRSS{ok: err == nil}
}

// report adds the peak as peak-MiB (per run: use -benchtime 1x).
func (p peakRSS) report(b *testing.B) {
	if !p.ok {
		return
	}
	status, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return
	}
	for _, line := range bytes.Split(status, []byte("\n")) {
		if f := bytes.Fields(line); len(f) == 3 && string(f[0]) == "VmHWM:" {
			if kib, err := strconv.ParseFloat(string(f[1]), 64); err == nil {
				b.ReportMetric(kib/1024, "peak-MiB")
			}
		}
	}
}
