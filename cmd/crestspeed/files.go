package main

import (
	"fmt"
	"os"
	"path/filepath"
)

// writeFileAtomic writes data to a temporary file beside path and renames it
// into place, so path is either complete or absent.
func writeFileAtomic(path string, data []byte) error {
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".part-*")
	if err != nil {
		return fmt.Errorf("cannot write in %s: %v", dir, err)
	}
	name := tmp.Name()
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("cannot write %s: %v", path, err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("cannot write %s: %v", path, err)
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("cannot write %s: %v", path, err)
	}
	return nil
}
