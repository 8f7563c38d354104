// Command measure runs a command and prints its wall time and peak
// resident memory, for the scale check (`make scale`).
//
// Usage:
//
//	go run ./examples/scale/measure LABEL COMMAND [ARGS...]
package main

import (
	"fmt"
	"os"
	"os/exec"
	"syscall"
	"time"
)

func main() {
	if len(os.Args) < 3 {
		fmt.Fprintln(os.Stderr, "usage: measure LABEL COMMAND [ARGS...]")
		os.Exit(2)
	}
	cmd := exec.Command(os.Args[2], os.Args[3:]...)
	cmd.Stdout, cmd.Stderr = os.Stdout, os.Stderr
	start := time.Now()
	err := cmd.Run()
	wall := time.Since(start)
	var rss int64
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		rss = ru.Maxrss // KiB on Linux
	}
	fmt.Printf("%s: wall %.2f s, peak memory %.1f MiB\n", os.Args[1], wall.Seconds(), float64(rss)/1024)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}
