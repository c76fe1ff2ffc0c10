package surface

// Stages of a Worker exposed to the benchmarks of package surface_test.

// ReprojectWorld reprojects the worker's last disparity map to world points.
func ReprojectWorld(w *Worker) error { return w.reproject(true) }

// Bin grids the worker's last world points into m.
func Bin(w *Worker, m *Map) error { return w.bin(m) }
