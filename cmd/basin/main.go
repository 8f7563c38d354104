// main.go holds only main: the manual is doc.go, the commands are one file
// each (command.go lists them).

package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"syscall"
	"time"
)

// interruptGrace is how long an interrupted command may take to notice
// its cancelled context and clean up before basin exits anyway. A command
// blocked in a read that no context reaches (stdin, a named pipe, a stuck
// network file system) would otherwise ignore SIGINT and SIGTERM.
const interruptGrace = 2 * time.Second

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	done := make(chan int, 1)
	go func() { done <- basinMain(ctx, os.Args[1:], os.Stdout, os.Stderr) }()
	var code int
	select {
	case code = <-done:
	case <-ctx.Done():
		select {
		case code = <-done:
		case <-time.After(interruptGrace):
			// Wait for an output being written to be finished or removed,
			// and keep any other from starting.
			written := holdOutputs()
			name := "basin"
			if len(os.Args) > 1 {
				name += " " + os.Args[1]
			}
			if written {
				fmt.Fprintf(os.Stderr, "%s: interrupted after its outputs were written\n", name)
			} else {
				fmt.Fprintf(os.Stderr, "%s: interrupted; no output written\n", name)
			}
			code = 3
		}
	}
	stop()
	os.Exit(code)
}
