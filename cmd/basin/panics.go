package main

import (
	"fmt"
	"os"
	"runtime/debug"
)

// A panicError is a panic recovered in one of basin's goroutines: a bug,
// reported in one line with exit 3 (an unrecovered panic would exit 2,
// the code for bad input, with a stack trace). BASIN_TRACE=1 in the
// environment prints the stack as well.
type panicError struct {
	where string
	value any
	stack []byte
}

func (e *panicError) Error() string {
	return fmt.Sprintf("internal failure %s: %v (a bug in basin, not in the input)", e.where, e.value)
}

func recovered(where string, v any) *panicError {
	return &panicError{where: where, value: v, stack: debug.Stack()}
}

// trace reports whether the stacks of recovered panics are printed.
func trace() bool { return os.Getenv("BASIN_TRACE") == "1" }

// screenSafe is screenOne with a panic turned into the file's error.
func screenSafe(f func() fileResult, file string) (r fileResult) {
	defer func() {
		if v := recover(); v != nil {
			r = fileResult{err: recovered("screening "+printable(file), v)}
		}
	}()
	return f()
}
