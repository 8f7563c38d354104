//go:build unix

package main

import (
	"errors"
	"fmt"
	"os"
	"syscall"
	"time"
)

// lockWait is how long a writer waits for another basin writing the same
// folder before giving up. Writers hold the lock only while they rename.
const lockWait = time.Minute

// lockDir takes an exclusive advisory lock (flock) on the folder itself,
// so no lock file is left behind, and returns its release.
func lockDir(dir string) (func(), error) {
	f, err := os.Open(dir)
	if err != nil {
		return nil, outDirError(dir, err)
	}
	deadline := time.Now().Add(lockWait)
	for {
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if err == nil {
			return func() { syscall.Flock(int(f.Fd()), syscall.LOCK_UN); f.Close() }, nil
		}
		if !errors.Is(err, syscall.EWOULDBLOCK) {
			f.Close()
			return nil, fmt.Errorf("locking %s: %w", dir, err)
		}
		if time.Now().After(deadline) {
			f.Close()
			return nil, &inputError{fmt.Errorf("another basin has been writing to --out %s for %v; try again when it is done", dir, lockWait)}
		}
		time.Sleep(20 * time.Millisecond)
	}
}
