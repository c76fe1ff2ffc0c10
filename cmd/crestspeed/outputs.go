package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"syscall"

	"crestspeed/internal/atomicfile"
)

// claimOutputs prepares the outputs a verb is about to write, before any
// work is done: their folders must be writable, temporaries left there by a
// killed run are removed, and finished outputs are refused unless force —
// with force they are removed first, so that no stale output of an earlier
// run is left beside the new ones.
func claimOutputs(force bool, paths ...string) error {
	var existing []string
	for _, p := range paths {
		if _, err := os.Lstat(p); err == nil {
			existing = append(existing, p)
		} else if !errors.Is(err, os.ErrNotExist) && !errors.Is(err, syscall.ENOTDIR) {
			return fmt.Errorf("cannot check output %s: %w", p, err)
		}
	}
	if len(existing) > 0 && !force {
		return usageError{fmt.Errorf("%s already exists; use --force to replace it", existing[0])}
	}
	checked := map[string]bool{}
	for _, p := range paths {
		dir := filepath.Dir(p)
		if !checked[dir] {
			if err := atomicfile.CheckWritable(dir); err != nil {
				return err
			}
			checked[dir] = true
		}
		if _, err := atomicfile.RemoveStale(p); err != nil {
			return fmt.Errorf("cannot clear temporaries of %s: %w", p, err)
		}
	}
	for _, p := range existing {
		if err := os.RemoveAll(p); err != nil {
			return fmt.Errorf("cannot replace %s: %w", p, err)
		}
	}
	return nil
}

// inDir joins names to dir.
func inDir(dir string, names ...string) []string {
	out := make([]string, len(names))
	for i, n := range names {
		out[i] = filepath.Join(dir, n)
	}
	return out
}
