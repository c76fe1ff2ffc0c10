package main

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/spf13/viper"
)

// FuzzConfigFile feeds arbitrary bytes to the configuration reader: it must
// accept the file or refuse it with an error, never panic, and whatever it
// accepts must decode into a Config.
func FuzzConfigFile(f *testing.F) {
	f.Add([]byte(configTemplate))
	f.Add([]byte("track:\n  depth_m: 12\n  steepness_bounds: [0.1, 0.2]\n"))
	f.Add([]byte("track: [1, 2]\n"))
	f.Add([]byte("synthesize:\n  grid: {nx: 1.5}\n"))
	f.Add([]byte("reconstruct:\n  grid:\n    x0_m: .nan\n"))
	f.Add([]byte("\xff\xfe: :\n"))
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(dir, "c.yaml")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		v := viper.New()
		if err := readConfigFile(v, p); err != nil {
			return
		}
		if _, err := decodeConfig(v); err != nil {
			t.Fatalf("a configuration the reader accepted does not decode: %v", err)
		}
	})
}
