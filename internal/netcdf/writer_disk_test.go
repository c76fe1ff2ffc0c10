package netcdf

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// smallDisk mounts a tmpfs of the given size on a fresh folder and returns
// it; the test is skipped where mounting is not allowed (not root).
func smallDisk(t *testing.T, size string) string {
	t.Helper()
	dir := t.TempDir()
	if err := syscall.Mount("tmpfs", dir, "tmpfs", 0, "size="+size); err != nil {
		t.Skipf("cannot mount a small tmpfs to fill (%v); needs root", err)
	}
	t.Cleanup(func() { syscall.Unmount(dir, syscall.MNT_DETACH) })
	return dir
}

// TestWriteDiskFull fills a 256 KiB file system: the error names the file
// and says the disk is full (libnetcdf alone says "NetCDF: HDF error"), and
// neither the temporary nor the final file is left.
func TestWriteDiskFull(t *testing.T) {
	dir := smallDisk(t, "256k")
	path := filepath.Join(dir, "maps.nc")
	w, err := Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	must(w.DefDim("t", 0))
	must(w.DefDim("c", 64*64))
	must(w.DefVar("v", Float32, []string{"t", "c"}))
	must(w.SetChunks("v", []int{1, 64 * 64}))
	must(w.EndDef())
	frame := make([]float32, 64*64)
	for i := range frame {
		frame[i] = float32(i) * 1.37 // incompressible enough; uncompressed anyway
	}
	var werr error
	for k := 0; k < 200 && werr == nil; k++ {
		werr = w.PutFloat32Slab("v", []int{k, 0}, []int{1, 64 * 64}, frame)
	}
	if werr == nil {
		werr = w.Commit()
	}
	if werr == nil {
		t.Fatal("200 frames of 16 KiB fitted on a 256 KiB disk")
	}
	msg := werr.Error()
	if !errors.Is(werr, ErrDiskFull) || !strings.Contains(msg, path) || !strings.Contains(msg, "is full") {
		t.Errorf("error %q; want a full-disk sentence naming %s", msg, path)
	}
	t.Log(msg)
	w.Abort()
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("left behind: %v", ents)
	}
}

// TestCommitModeAndDurability: the committed file has mode 0644 whatever
// the umask, and no temporary file is left.
func TestCommitModeAndDurability(t *testing.T) {
	old := syscall.Umask(0o077)
	defer syscall.Umask(old)
	dir := t.TempDir()
	path := writeSample(t, dir)
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, want 0644", fi.Mode().Perm())
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("folder holds %v", ents)
	}
}
