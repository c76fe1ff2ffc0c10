package calib

import (
	"reflect"
	"strings"
	"testing"
)

// FuzzParseRig reads any bytes as a rig file: no panic, an error is one
// sentence naming the file, and a rig that is accepted is valid and comes
// back the same through Marshal and ParseRig. Seed corpus in
// testdata/fuzz/FuzzParseRig; run with
//
//	go test ./calib -run '^$' -fuzz '^FuzzParseRig$' -fuzztime 15s -fuzzminimizetime 2s
func FuzzParseRig(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := ParseRig(data, "rig.yaml")
		if err != nil {
			msg := err.Error()
			if !strings.HasPrefix(msg, "rig file rig.yaml ") || strings.ContainsAny(msg, "\n\r") {
				t.Fatalf("error is not one line naming the file: %q", msg)
			}
			return
		}
		if err := r.Validate(); err != nil {
			t.Fatalf("accepted an invalid rig: %v", err)
		}
		out, err := r.Marshal()
		if err != nil {
			t.Fatalf("accepted rig cannot be saved: %v", err)
		}
		back, err := ParseRig(out, "again.yaml")
		if err != nil {
			t.Fatalf("saved rig cannot be read back: %v\n%s", err, out)
		}
		if !reflect.DeepEqual(back, r) {
			t.Fatalf("round trip changed the rig:\n%+v\n%+v", r, back)
		}
	})
}
