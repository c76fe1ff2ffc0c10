package report

import (
	"fmt"
	"os"
	"path/filepath"
)

// fileSet writes files under temporary names beside their final place and
// renames them into place together (commit), or removes them (abort).
// Each file is synced before it is renamed and each folder after, so
// that what was committed survives a crash.
type fileSet struct {
	tmp, final []string
}

// create makes the temporary file of dir/name.
func (s *fileSet) create(dir, name string) (*os.File, error) {
	final := filepath.Join(dir, name)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create folder %s: %w", dir, err)
	}
	f, err := os.CreateTemp(dir, "."+filepath.Base(name)+".part-*")
	if err != nil {
		return nil, fmt.Errorf("cannot write in %s: %w", dir, err)
	}
	s.tmp = append(s.tmp, f.Name())
	s.final = append(s.final, final)
	return f, nil
}

// reserve returns a temporary path for a file that will become dir/name
// at commit; the caller writes it.
func (s *fileSet) reserve(dir, name string) (string, error) {
	f, err := s.create(dir, name)
	if err != nil {
		return "", err
	}
	f.Close()
	os.Remove(f.Name())
	return f.Name(), nil
}

// lastTemp is the temporary path of the file written last.
func (s *fileSet) lastTemp() string { return s.tmp[len(s.tmp)-1] }

// write fills the temporary file of dir/name (name may lie in a
// sub-folder of dir).
func (s *fileSet) write(dir, name string, fill func(*os.File) error) error {
	f, err := s.create(dir, name)
	if err != nil {
		return err
	}
	final := filepath.Join(dir, name)
	if err := fill(f); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %w", final, err)
	}
	if err := first(f.Sync(), f.Close()); err != nil {
		return fmt.Errorf("cannot write %s: %w", final, err)
	}
	return nil
}

// writeBytes stores data as dir/name at commit. A name in a sub-folder
// ("figures/x.png") is written beside dir and moved into the sub-folder
// at commit, so that nothing appears in it before.
func (s *fileSet) writeBytes(dir, name string, data []byte) error {
	if sub := filepath.Dir(name); sub != "." {
		if err := s.write(dir, filepath.Base(name), func(f *os.File) error { _, err := f.Write(data); return err }); err != nil {
			return err
		}
		s.final[len(s.final)-1] = filepath.Join(dir, name)
		return nil
	}
	return s.write(dir, name, func(f *os.File) error { _, err := f.Write(data); return err })
}

// commit renames every file into place: folders first, so that a failure
// there leaves nothing renamed.
func (s *fileSet) commit() error {
	dirs := map[string]bool{}
	for i := range s.tmp {
		d := filepath.Dir(s.final[i])
		if fi, err := os.Stat(d); err == nil && !fi.IsDir() {
			return fmt.Errorf("cannot write %s: %s is a file, not a folder; move it away", s.final[i], d)
		}
		if err := os.MkdirAll(d, 0o755); err != nil {
			return fmt.Errorf("cannot create %s: %w", d, err)
		}
		if fi, err := os.Stat(s.final[i]); err == nil && fi.IsDir() {
			return fmt.Errorf("cannot write %s: a folder of that name is in the way; move it away", s.final[i])
		}
		dirs[d] = true
	}
	for i := range s.tmp {
		// CreateTemp makes files readable by their owner only; outputs are
		// for everybody who can read the folder.
		if err := os.Chmod(s.tmp[i], 0o644); err != nil {
			return fmt.Errorf("cannot write %s: %w", s.final[i], err)
		}
		if err := os.Rename(s.tmp[i], s.final[i]); err != nil {
			return fmt.Errorf("cannot write %s: %w", s.final[i], err)
		}
		s.tmp[i] = ""
	}
	s.tmp = nil
	for d := range dirs {
		if f, err := os.Open(d); err == nil {
			f.Sync()
			f.Close()
		}
	}
	return nil
}

func (s *fileSet) abort() {
	for _, t := range s.tmp {
		if t != "" {
			os.Remove(t)
		}
	}
}
