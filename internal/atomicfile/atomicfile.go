// Package atomicfile writes output files so that they are either complete
// or absent, and stay so across a crash or a power cut.
//
// A file is written under a temporary name beside its final one
// (".NAME.part-RANDOM"), flushed to disk, given the usual output
// permissions (0644, before the umask), renamed into place, and the folder
// is flushed too, so the rename itself survives a crash. Temporaries left
// by a killed run are recognised by their name and removed by RemoveStale.
package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"syscall"
)

// Mode is the permission of every output file (before the umask).
const Mode os.FileMode = 0o644

// ErrDiskFull marks a write that failed because the file system is full
// (or the user's quota is exhausted).
var ErrDiskFull = errors.New("no space left on the device")

// tempPrefix is the start of the temporary name of path.
func tempPrefix(path string) string { return "." + filepath.Base(path) + ".part-" }

// IsTemp reports whether name (a base name) is a temporary of this package.
func IsTemp(name string) bool {
	return strings.HasPrefix(name, ".") && strings.Contains(name, ".part-")
}

// File is an output being written. Write to it, then Commit, or Abort to
// leave nothing behind.
type File struct {
	f    *os.File
	path string
	done bool
}

// Create starts writing path. The folder must exist.
func Create(path string) (*File, error) {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, tempPrefix(path)+"*")
	if err != nil {
		return nil, describe(fmt.Errorf("cannot write in %s: %w", dir, err))
	}
	return &File{f: f, path: path}, nil
}

// Write writes to the temporary file.
func (w *File) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	if err != nil {
		err = describe(fmt.Errorf("cannot write %s: %w", w.path, err))
	}
	return n, err
}

// Name is the temporary file's path (for writers that need a path).
func (w *File) Name() string { return w.f.Name() }

// Commit flushes the file to disk and renames it into place.
func (w *File) Commit() error {
	if w.done {
		return fmt.Errorf("%s was already committed or aborted", w.path)
	}
	w.done = true
	name := w.f.Name()
	err := w.f.Sync()
	if err == nil {
		err = w.f.Chmod(Mode)
	}
	if cerr := w.f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		os.Remove(name)
		return describe(fmt.Errorf("cannot write %s: %w", w.path, err))
	}
	return Rename(name, w.path)
}

// Abort removes the temporary file.
func (w *File) Abort() {
	if w.done {
		return
	}
	w.done = true
	w.f.Close()
	os.Remove(w.f.Name())
}

// WriteFile writes data to path atomically and durably.
func WriteFile(path string, data []byte) error {
	return Write(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// Write writes path atomically from the function fill.
func Write(path string, fill func(w io.Writer) error) error {
	w, err := Create(path)
	if err != nil {
		return err
	}
	if err := fill(w); err != nil {
		w.Abort()
		return err
	}
	return w.Commit()
}

// TempPath returns a fresh temporary name for path, for writers (such as
// the NetCDF library) that create the file themselves; finish with Rename.
func TempPath(path string) (string, error) {
	f, err := os.CreateTemp(filepath.Dir(path), tempPrefix(path)+"*")
	if err != nil {
		return "", describe(fmt.Errorf("cannot write in %s: %w", filepath.Dir(path), err))
	}
	name := f.Name()
	f.Close()
	return name, nil
}

// Rename moves the finished temporary file tmp to path durably: the file is
// flushed, given Mode, renamed, and its folder flushed. On failure tmp is
// removed.
func Rename(tmp, path string) error {
	if err := syncFile(tmp); err != nil {
		os.Remove(tmp)
		return describe(fmt.Errorf("cannot write %s: %w", path, err))
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return describe(fmt.Errorf("cannot write %s: %w", path, err))
	}
	if err := SyncDir(filepath.Dir(path)); err != nil {
		return describe(fmt.Errorf("cannot write %s: %w", path, err))
	}
	return nil
}

func syncFile(name string) error {
	f, err := os.OpenFile(name, os.O_RDWR, 0)
	if err != nil {
		return err
	}
	err = f.Sync()
	if cerr := f.Chmod(Mode); err == nil {
		err = cerr
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// SyncDir flushes a folder's entries (after a rename or a removal).
func SyncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = d.Sync()
	if errors.Is(err, syscall.EINVAL) {
		err = nil // file systems that cannot sync a folder
	}
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	return err
}

// RemoveStale removes the temporaries of path left by a run that was
// killed before it could commit or abort them, and returns how many.
func RemoveStale(path string) (int, error) {
	matches, err := filepath.Glob(filepath.Join(filepath.Dir(path), globEscape(tempPrefix(path))+"*"))
	if err != nil {
		return 0, err
	}
	n := 0
	for _, m := range matches {
		if err := os.Remove(m); err == nil {
			n++
		}
	}
	return n, nil
}

// globEscape quotes the glob metacharacters of s.
func globEscape(s string) string {
	r := strings.NewReplacer(`\`, `\\`, `*`, `\*`, `?`, `\?`, `[`, `\[`)
	return r.Replace(s)
}

// CheckWritable reports, before any work is done, whether files can be
// created in dir: in dir itself when it exists, otherwise in its nearest
// existing ancestor (where dir would be created). It creates nothing that
// outlives the call.
func CheckWritable(dir string) error {
	probe := filepath.Clean(dir)
	for {
		fi, err := os.Stat(probe)
		if err == nil {
			if !fi.IsDir() {
				return fmt.Errorf("cannot write in %s: %s is not a folder", dir, probe)
			}
			break
		}
		if !errors.Is(err, os.ErrNotExist) && !errors.Is(err, syscall.ENOTDIR) {
			return fmt.Errorf("cannot write in %s: %w", dir, err)
		}
		parent := filepath.Dir(probe)
		if parent == probe {
			return fmt.Errorf("cannot write in %s: no part of the path exists", dir)
		}
		probe = parent
	}
	f, err := os.CreateTemp(probe, ".crestspeed-write-check-*")
	if err != nil {
		return describe(fmt.Errorf("cannot write in %s: %w", dir, err))
	}
	name := f.Name()
	f.Close()
	return os.Remove(name)
}

// describe marks errors of a full disk with ErrDiskFull, so that callers can
// say so in plain words.
func describe(err error) error {
	if errors.Is(err, syscall.ENOSPC) || errors.Is(err, syscall.EDQUOT) {
		return fmt.Errorf("%w (%w)", err, ErrDiskFull)
	}
	return err
}
