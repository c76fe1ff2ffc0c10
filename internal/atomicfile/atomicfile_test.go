package atomicfile

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
)

func TestCommitAbort(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.csv")
	if err := WriteFile(p, []byte("a,b\n1,2\n")); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(p)
	if err != nil || string(b) != "a,b\n1,2\n" {
		t.Fatalf("read back %q, %v", b, err)
	}
	fi, _ := os.Stat(p)
	umask := syscall.Umask(0)
	syscall.Umask(umask)
	if want := Mode &^ os.FileMode(umask); fi.Mode().Perm() != want {
		t.Errorf("mode %v, want %v like every other output", fi.Mode().Perm(), want)
	}
	// an aborted write leaves nothing, and the old file stays
	err = Write(p, func(w io.Writer) error {
		w.Write([]byte("half"))
		return errors.New("the analysis failed")
	})
	if err == nil {
		t.Fatal("the fill error was lost")
	}
	if b, _ := os.ReadFile(p); string(b) != "a,b\n1,2\n" {
		t.Errorf("an aborted write changed the finished file: %q", b)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("an aborted write left files: %v", entries)
	}
}

func TestRemoveStale(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "crests[1].csv") // glob metacharacters in the name
	for i := 0; i < 3; i++ {
		f, err := os.CreateTemp(dir, tempPrefix(p)+"*")
		if err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
	other := filepath.Join(dir, ".summary.json.part-123")
	os.WriteFile(other, nil, 0o644)
	n, err := RemoveStale(p)
	if err != nil || n != 3 {
		t.Fatalf("removed %d, %v; want the 3 temporaries of %s", n, err, p)
	}
	if _, err := os.Stat(other); err != nil {
		t.Errorf("the temporary of another output was removed")
	}
	if !IsTemp(filepath.Base(other)) || IsTemp("summary.json") {
		t.Errorf("IsTemp does not tell temporaries from outputs")
	}
}

func TestCheckWritable(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root can write in a read-only folder")
	}
	dir := filepath.Join(t.TempDir(), "ro")
	os.Mkdir(dir, 0o555)
	if err := CheckWritable(dir); err == nil {
		t.Fatal("a read-only folder passed the check")
	}
}

func TestDiskFullIsNamed(t *testing.T) {
	err := describe(fmt.Errorf("cannot write x: %w", &os.PathError{Op: "write", Path: "x", Err: syscall.ENOSPC}))
	if !errors.Is(err, ErrDiskFull) {
		t.Fatalf("ENOSPC not marked as a full disk: %v", err)
	}
	// A real full file system, where one can be made: a 64 KiB tmpfs.
	if os.Geteuid() != 0 {
		t.Skip("making a small file system needs root")
	}
	dir := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=64k", "tmpfs", dir).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a small tmpfs here: %v %s", err, out)
	}
	defer exec.Command("umount", dir).Run()
	err = WriteFile(filepath.Join(dir, "big.nc"), bytes.Repeat([]byte{1}, 1<<20))
	if !errors.Is(err, ErrDiskFull) {
		t.Fatalf("writing 1 MiB into 64 KiB gave %v, want a full-disk error", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("a failed write left %v", entries)
	}
}
