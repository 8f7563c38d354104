package main

import (
	"context"
	"fmt"
	"runtime"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

var cmdVersion = &command{
	UsageLine: "basin version",
	Short:     "print basin's version",
}

func init() { cmdVersion.Run = runVersion }

func runVersion(ctx context.Context, e *env, args []string) error {
	args, err := cmdVersion.parse(e, cmdVersion.flagSet(), args)
	if err != nil {
		return err
	}
	if err := noInputs(cmdVersion, args); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "basin %s (%s, %s/%s)\n", version, runtime.Version(), runtime.GOOS, runtime.GOARCH)
	return nil
}
