package main

import (
	"context"
	"fmt"
	"runtime"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

func init() {
	register(&command{
		Name:  "version",
		Usage: "basin version",
		Short: "print basin's version",
		Run: func(ctx context.Context, e *env, _ any, args []string) error {
			fmt.Fprintf(e.stdout, "basin %s (%s, %s/%s)\n", version, runtime.Version(), runtime.GOOS, runtime.GOARCH)
			return nil
		},
	})
}
