package main

import (
	"io"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/slurm"
	"crestspeed/samples"
)

// The workers of a part task follow its CPUs as far as its memory holds
// them, by the memory model of partsize.go (base + per-worker memory that
// grows with the pixels of a pair); a task too small for one worker is
// refused with the memory it needs.
func TestTaskWorkers(t *testing.T) {
	per := workerMB(2448, 2048) // 5.01 MP
	cases := []struct {
		cpus  int
		memMB int64
		want  int
	}{
		{8, 0, 8},     // memory not limited: one per CPU
		{2, 64000, 2}, // plenty of memory: one per CPU
		{8, int64(reconstructBaseMB + 3*per + 1), 3}, // memory for three
		{8, int64(reconstructBaseMB + per + 1), 1},
	}
	for _, c := range cases {
		got, err := taskWorkers(c.cpus, c.memMB, 2448, 2048)
		if err != nil || got != c.want {
			t.Errorf("%d CPUs, %d MB: %d workers (%v), want %d", c.cpus, c.memMB, got, err, c.want)
		}
	}
	_, err := taskWorkers(4, int64(reconstructBaseMB), 2448, 2048)
	if err == nil || !strings.Contains(err.Error(), "slurm.memory") {
		t.Errorf("a task with only the base memory: %v, want a sentence naming slurm.memory", err)
	}
}

// The task's memory comes from SLURM_MEM_PER_NODE, or SLURM_MEM_PER_CPU
// times SLURM_CPUS_PER_TASK (sbatch's output environment variables).
func TestSlurmTaskMemory(t *testing.T) {
	t.Setenv("SLURM_MEM_PER_NODE", "")
	t.Setenv("SLURM_MEM_PER_CPU", "")
	if m := slurmTaskMemoryMB(); m != 0 {
		t.Errorf("outside Slurm: %d MB", m)
	}
	t.Setenv("SLURM_MEM_PER_CPU", "1500")
	t.Setenv("SLURM_CPUS_PER_TASK", "4")
	if m := slurmTaskMemoryMB(); m != 6000 {
		t.Errorf("1500 MB per CPU × 4: %d MB", m)
	}
	t.Setenv("SLURM_MEM_PER_NODE", "4096")
	if m := slurmTaskMemoryMB(); m != 4096 {
		t.Errorf("4096 MB per node: %d MB", m)
	}
}

// A Slurm submission that leaves the part size open sizes its parts from
// the task: defaultPairsPerPart pairs per two workers, the workers being
// the task's CPUs as far as its memory holds them for the deployment's
// pairs (640×512 px here); too little memory is refused before anything
// is submitted.
func TestSlurmPartsSize(t *testing.T) {
	dep := runDeploymentDir(t)
	cfg := defaultConfig()
	cfg.Out = t.TempDir()
	cfg.Reconstruct.Frames = filepath.Join(dep, samples.DeploymentFramesDir)
	cfg.Reconstruct.Rig = filepath.Join(dep, samples.DeploymentRig)
	opts := slurm.DefaultOptions()
	opts.CPUsPerTask, opts.Memory = 4, "2G"
	con := &console{stdout: io.Discard, stderr: io.Discard}
	c := cfg
	if err := slurmPartsSize(con, &c, opts); err != nil {
		t.Fatal(err)
	}
	if c.Run.PairsPerPart != 2*defaultPairsPerPart {
		t.Errorf("4 CPUs and 2 GB for 640×512 px pairs: %d pairs per part, want %d", c.Run.PairsPerPart, 2*defaultPairsPerPart)
	}
	c = cfg
	c.Run.Parts = 3 // the configuration's choice stands
	if err := slurmPartsSize(con, &c, opts); err != nil || c.Run.PairsPerPart != 0 {
		t.Errorf("run.parts given: pairs per part %d (%v), want it left alone", c.Run.PairsPerPart, err)
	}
	c = cfg
	opts.Memory = "300M"
	err := slurmPartsSize(con, &c, opts)
	checkSentence(t, err, "slurm.memory")
}
