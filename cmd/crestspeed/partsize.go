package main

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"crestspeed/ingest"
	"crestspeed/internal/slurm"
)

// Memory of the reconstruction of one part, from the peak resident set of
// "crestspeed reconstruct" with 1 and 2 workers on the 2448×2048 px bench
// deployment (README "Benchmarks": 628 and 863 MB, so 235 MB per worker at
// 5.0 MP and 393 MB for the rest): a base for the process (libraries,
// settled geometry, grid, output buffers) and, per worker, an amount that
// grows with the pixels of a pair (its images, rectified images, disparity
// strips and point cloud). Both are rounded up, so that a task given this
// much does not run out.
const (
	reconstructBaseMB        = 400.0
	reconstructWorkerMBPerMP = 50.0
)

// workerMB is the memory one reconstruction worker needs for pairs of
// w×h pixels, in MB.
func workerMB(w, h int) float64 {
	return reconstructWorkerMBPerMP * float64(w) * float64(h) / 1e6
}

// taskWorkers is how many reconstruction workers a task with cpus CPUs
// and memMB MB of memory (0: not limited) can run on pairs of w×h
// pixels: one per CPU, fewer where the memory holds fewer. It refuses a
// task whose memory cannot hold one worker.
func taskWorkers(cpus int, memMB int64, w, h int) (int, error) {
	n := max(1, cpus)
	if memMB <= 0 || w <= 0 || h <= 0 {
		return n, nil
	}
	fit := int(math.Floor((float64(memMB) - reconstructBaseMB) / workerMB(w, h)))
	if fit < 1 {
		return 0, fmt.Errorf("a task with %d MB of memory cannot reconstruct %d×%d px pairs, which need about %.0f MB for one worker; give slurm.memory at least %.0fM",
			memMB, w, h, reconstructBaseMB+workerMB(w, h), math.Ceil(reconstructBaseMB+workerMB(w, h)))
	}
	return min(n, fit), nil
}

// slurmTaskMemoryMB is the memory Slurm gave the running task, in MB:
// SLURM_MEM_PER_NODE, or SLURM_MEM_PER_CPU times SLURM_CPUS_PER_TASK; 0
// outside a Slurm job or when neither is set.
func slurmTaskMemoryMB() int64 {
	if v, err := strconv.ParseInt(strings.TrimSpace(os.Getenv("SLURM_MEM_PER_NODE")), 10, 64); err == nil && v > 0 {
		return v
	}
	per, err := strconv.ParseInt(strings.TrimSpace(os.Getenv("SLURM_MEM_PER_CPU")), 10, 64)
	if err != nil || per <= 0 {
		return 0
	}
	cpus, err := strconv.Atoi(strings.TrimSpace(os.Getenv("SLURM_CPUS_PER_TASK")))
	if err != nil || cpus < 1 {
		cpus = 1
	}
	return per * int64(cpus)
}

// pairSize is the size in pixels of the first pair of the deployment.
func pairSize(c Config) (w, h int, err error) {
	src, err := ingest.OpenPairs(pairSpec(c))
	if err != nil {
		return 0, 0, err
	}
	defer src.Close()
	var f ingest.StereoFrame
	if err := src.Next(&f); err != nil {
		return 0, 0, fmt.Errorf("cannot read the first stereo pair: %w", err)
	}
	defer f.Left.Close()
	defer f.Right.Close()
	return f.Left.Cols(), f.Left.Rows(), nil
}

// slurmPartsSize sets, for a submission whose configuration leaves the
// part size open (run.parts and run.pairs_per_part both 0), the pairs per
// part from the resources of one task: defaultPairsPerPart pairs per two
// workers, so that a part takes about as long whatever the task's size,
// the workers being one per CPU (slurm.cpus_per_task) as far as the task's
// memory (slurm.memory) holds them. It says what it chose.
func slurmPartsSize(con *console, cfg *Config, opts slurm.Options) error {
	if cfg.Run.Parts > 0 || cfg.Run.PairsPerPart > 0 {
		return nil
	}
	c, err := resolveRun(*cfg)
	if err != nil {
		return err
	}
	w, h, err := pairSize(c)
	if err != nil {
		return usageError{err}
	}
	var memMB int64
	if opts.Memory != "" {
		if memMB, err = slurm.ParseMemoryMB(opts.Memory); err != nil {
			return usageError{fmt.Errorf("slurm.memory: %w", err)}
		}
	}
	n, err := taskWorkers(opts.CPUsPerTask, memMB, w, h)
	if err != nil {
		return usageError{err}
	}
	cfg.Run.PairsPerPart = max(1, defaultPairsPerPart*n/2)
	con.logf("run: %d×%d px pairs, tasks of %d CPUs and %s: %d workers per part, %d pairs per part (set run.parts or run.pairs_per_part to choose)",
		w, h, opts.CPUsPerTask, memoryText(opts.Memory), n, cfg.Run.PairsPerPart)
	return nil
}

func memoryText(m string) string {
	if m == "" {
		return "the cluster's default memory"
	}
	return m + " of memory"
}

// partWorkers caps the workers of a part step run inside a Slurm task by
// the task's memory.
func partWorkers(con *console, c Config, workers int) (int, error) {
	memMB := slurmTaskMemoryMB()
	if memMB == 0 {
		return workers, nil
	}
	w, h, err := pairSize(c)
	if err != nil {
		return 0, err
	}
	n, err := taskWorkers(max(workers, 1), memMB, w, h)
	if err != nil {
		return 0, usageError{err}
	}
	if n < workers {
		con.logf("part: %d workers instead of %d: the task's %d MB hold %d for %d×%d px pairs (about %.0f MB each)", n, workers, memMB, n, w, h, workerMB(w, h))
	}
	return n, nil
}
