package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sync/atomic"
	"testing"
	"time"
)

// writeSmallFiles writes n tiny runs that settle (screenCert's units).
func writeSmallFiles(t *testing.T, dir string, n int) {
	t.Helper()
	body := []byte("time [s],pitch [deg],rate [deg/s]\n0,1.9,1\n0.02,1.8,0.9\n0.04,1.7,0.8\n0.06,1.6,0.5\n0.08,1.55,0.2\n0.1,1.52,0.1\n0.12,1.51,0.05\n0.14,1.5,0.01\n")
	for i := 0; i < n; i++ {
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("r%05d.csv", i)), body, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestScreenOpenFiles: screening 5,000 files holds at most about one open
// file per worker. In process, /proc/self/fd is counted while screen runs;
// then the binary runs under `ulimit -n 64`, which 5,000 open files at
// once would exceed.
func TestScreenOpenFiles(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("counts /proc/self/fd")
	}
	if testing.Short() {
		t.Skip("writes 5,000 files")
	}
	dir := t.TempDir()
	writeSmallFiles(t, dir, 5000)
	cert := writeTestCert(t, screenCert)
	count := func() int { e, _ := os.ReadDir("/proc/self/fd"); return len(e) }
	base := count()
	var peak atomic.Int64
	stop := make(chan struct{})
	sampled := make(chan struct{})
	go func() {
		defer close(sampled)
		for {
			peak.Store(max(peak.Load(), int64(count())))
			select {
			case <-stop:
				return
			case <-time.After(200 * time.Microsecond):
			}
		}
	}()
	const workers = 4
	var o, e bytes.Buffer
	code := basinMain(context.Background(), []string{"screen", "--quiet", "--json", "--workers", fmt.Sprint(workers), "--cert", cert, dir}, &o, &e)
	close(stop)
	<-sampled
	if code != 0 && code != 1 {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	// One file per worker, the certificate, and a few the runtime and the
	// sampler open themselves (the sampler's own directory handle, a
	// pipe): 16 is far below the 5,000 a leak would reach.
	extra := int(peak.Load()) - base
	t.Logf("open files: %d before, peak %d during (workers %d)", base, peak.Load(), workers)
	if extra > workers+16 {
		t.Errorf("peak %d open files beyond the %d before, want at most %d", extra, base, workers+16)
	}

	bin := buildBasin(t)
	cmd := exec.Command("bash", "-c", `ulimit -n 64 && exec "$0" screen --quiet --cert "$1" "$2"`, bin, cert, dir)
	out, err := cmd.CombinedOutput()
	if ee, ok := err.(*exec.ExitError); err != nil && (!ok || ee.ExitCode() != 1) {
		t.Fatalf("under ulimit -n 64: %v\n%s", err, out)
	}
	if !bytes.Contains(out, []byte("5000 runs in 5000 files")) {
		t.Errorf("under ulimit -n 64: output lacks the summary:\n%s", out[max(0, len(out)-300):])
	}
}
