// Command basin answers, from logged trajectories alone, whether a system
// settles to its operating point, from how far away, and how sure one can
// be. See doc.go for the manual.
package main

import (
	"context"
	"os"
	"os/signal"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := basinMain(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}
