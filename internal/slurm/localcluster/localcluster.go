// Package localcluster starts and stops the one-node Slurm of
// scripts/slurm-local for tests. A test that needs Slurm fails, never
// skips, when the cluster cannot be started: the Slurm path is part of
// what the tests check (scripts/setup-deps installs munge and Slurm; the
// tests run as root, as CI does).
package localcluster

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
)

// Cluster is a running one-node cluster.
type Cluster struct {
	Dir  string // its state folder
	Conf string // its slurm.conf, for SLURM_CONF
	port int
}

// script is scripts/slurm-local of this repository.
func script() string {
	_, file, _, _ := runtime.Caller(0)
	return filepath.Join(filepath.Dir(file), "..", "..", "..", "scripts", "slurm-local")
}

func (c *Cluster) run(verb string) (string, error) {
	cmd := exec.Command("bash", script(), verb)
	cmd.Env = append(os.Environ(), "LOCAL_SLURM_DIR="+c.Dir, "LOCAL_SLURM_PORT="+strconv.Itoa(c.port))
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	return out.String(), err
}

// Start starts a cluster with its state in dir, slurmctld on port and
// slurmd on port+1, and points this process's Slurm clients (and the jobs
// it submits) at it by setting SLURM_CONF. Two packages' tests use
// different dirs and ports, so that `go test ./...` may run them at once.
func Start(dir string, port int) (*Cluster, error) {
	if os.Geteuid() != 0 {
		return nil, fmt.Errorf("the Slurm tests start a one-node cluster with scripts/slurm-local and must run as root (as CI does)")
	}
	c := &Cluster{Dir: dir, Conf: filepath.Join(dir, "slurm.conf"), port: port}
	if out, err := c.run("start"); err != nil {
		_, _ = c.run("stop")
		return nil, fmt.Errorf("scripts/slurm-local start failed (%v); scripts/setup-deps installs munge and Slurm: %s", err, strings.TrimSpace(out))
	}
	if err := os.Setenv("SLURM_CONF", c.Conf); err != nil {
		return nil, err
	}
	return c, nil
}

// Stop ends the cluster's daemons and removes its folder.
func (c *Cluster) Stop() error {
	if out, err := c.run("stop"); err != nil {
		return fmt.Errorf("scripts/slurm-local stop failed (%v): %s", err, strings.TrimSpace(out))
	}
	return nil
}

// Lazy starts a cluster on first use, for a package whose TestMain stops
// it (Lazy.Stop) after m.Run. It is lazy so that the package's fuzz
// targets, whose worker processes run TestMain too, start no daemons.
type Lazy struct {
	Dir  string
	Port int
	once sync.Once
	c    *Cluster
	err  error
}

// Get returns the running cluster, starting it the first time.
func (l *Lazy) Get() (*Cluster, error) {
	l.once.Do(func() { l.c, l.err = Start(l.Dir, l.Port) })
	return l.c, l.err
}

// Stop stops the cluster if it was started.
func (l *Lazy) Stop() error {
	if l.c == nil {
		return nil
	}
	return l.c.Stop()
}
