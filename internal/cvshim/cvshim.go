// Package cvshim is crestspeed's thin cgo binding to the parts of OpenCV
// (Debian's libopencv 4.6) that gocv v0.31.0 does not wrap: stereo
// calibration, stereo rectification, and rectification maps built without
// the risk of an uncaught C++ exception.
//
// The package is meant to grow (dense stereo matching and reprojection to
// 3-D are expected to join it), so every binding follows the same rules,
// spelled out in cvshim.h:
//
//   - Each C entry point returns NULL or a malloc'd error message; the Go
//     side turns it into an error with [call] and frees it. C++ exceptions
//     (cv::Exception and any other) are caught inside the shim and never
//     unwind into Go.
//   - Small matrices cross as row-major float64 arrays owned by Go; point
//     lists as float32 slices owned by Go. The C side reads and writes them
//     only during the call (the cgo pointer rules allow this because they
//     hold no Go pointers).
//   - Images and maps cross as the cv::Mat* behind a gocv.Mat
//     (unsafe.Pointer(m.Ptr())). Go owns those Mats and closes them; the
//     shim only fills them.
//   - Every cv::Mat the shim creates is a C++ local, released on the way
//     out whatever the outcome.
//
// Flags are OpenCV's own values (checked against Debian's python3-opencv in
// the tests) so that OpenCV's documentation applies to them unchanged.
package cvshim

/*
#cgo pkg-config: opencv4
#cgo CXXFLAGS: -std=c++11 -O2
#include <stdlib.h>
#include "cvshim.h"
*/
import "C"

import (
	"errors"
	"strings"
	"unsafe"
)

// call converts a C error string into a Go error and frees it.
func call(msg *C.char) error {
	if msg == nil {
		return nil
	}
	s := C.GoString(msg)
	C.free(unsafe.Pointer(msg))
	return errors.New(strings.TrimSpace(s))
}
