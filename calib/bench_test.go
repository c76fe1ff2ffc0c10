package calib

import "testing"

func BenchmarkProject(b *testing.B) {
	rig := testRig()
	X := [3]float64{1.2, -0.7, 11}
	var s float64
	for i := 0; i < b.N; i++ {
		p := rig.ProjectRight(X)
		s += p[0]
	}
	_ = s
}

func BenchmarkUnproject(b *testing.B) {
	cam := testCameras[0]
	var s float64
	for i := 0; i < b.N; i++ {
		xy, _ := cam.Unproject([2]float64{float64(i % 1280), 1000})
		s += xy[0]
	}
	_ = s
}
