// Package slurm submits crestspeed's work to a Slurm cluster: the sbatch
// options of the configuration, the rendering of batch scripts (job arrays
// and jobs that wait on them), submission with sbatch, cancellation with
// scancel, and the state of each array task from squeue (or sacct where the
// cluster keeps accounting). The commands are the cluster's own clients,
// found on PATH; they find the cluster through their usual configuration
// (SLURM_CONF or /etc/slurm/slurm.conf). scripts/slurm-local starts a
// one-node cluster on this machine for the tests.
package slurm

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"
)

// Options are the sbatch options of every job crestspeed submits, from the
// slurm section of the configuration.
type Options struct {
	// Partition (sbatch --partition); "" = the cluster's default.
	Partition string `yaml:"partition"`
	// Account charged (sbatch --account); "" = the user's default.
	Account string `yaml:"account"`
	// Wall-time limit of one job or array task (sbatch --time), in Slurm's
	// forms: "minutes", "hours:minutes:seconds", "days-hours:minutes" ...
	// "" = the partition's default.
	Time string `yaml:"time"`
	// Memory of one job or array task (sbatch --mem): a whole number with an
	// optional unit K, M, G or T (default M); "" = the partition's default.
	Memory string `yaml:"memory"`
	// CPUs of one job or array task (sbatch --cpus-per-task).
	CPUsPerTask int `yaml:"cpus_per_task"`
	// Further sbatch options, one a line, as they would follow "#SBATCH "
	// (e.g. "--qos=long", "--constraint=skylake").
	Extra []string `yaml:"extra"`
}

// DefaultOptions are the options of a configuration that says nothing:
// two CPUs and 4 GB for up to 12 hours a task (common practice for a
// CPU-bound batch step; partitions often cap time at a day).
func DefaultOptions() Options {
	return Options{Time: "12:00:00", Memory: "4G", CPUsPerTask: 2, Extra: []string{}}
}

var (
	wordRe = regexp.MustCompile(`^[A-Za-z0-9_.,:+@-]+$`)
	// Slurm's time forms (sbatch --time): minutes, minutes:seconds,
	// hours:minutes:seconds, days-hours, days-hours:minutes,
	// days-hours:minutes:seconds.
	timeRe = regexp.MustCompile(`^(?:(\d+)-(\d+)(?::(\d+)(?::(\d+))?)?|(\d+)(?::(\d+)(?::(\d+))?)?)$`)
	memRe  = regexp.MustCompile(`^(\d+)([KMGTkmgt]?)$`)
	// Options crestspeed writes itself: the configuration must not set them.
	owned = []string{"--array", "-a", "--dependency", "-d", "--output", "-o", "--error", "-e",
		"--job-name", "-J", "--parsable", "--chdir", "-D", "--wrap"}
)

// Validate says in one sentence what is wrong with the options.
func (o Options) Validate() error {
	if o.Partition != "" && !wordRe.MatchString(o.Partition) {
		return fmt.Errorf("slurm.partition %q is not a partition name (letters, digits and _ . , : + @ - only)", o.Partition)
	}
	if o.Account != "" && !wordRe.MatchString(o.Account) {
		return fmt.Errorf("slurm.account %q is not an account name (letters, digits and _ . , : + @ - only)", o.Account)
	}
	if o.Time != "" {
		if _, err := ParseTime(o.Time); err != nil {
			return fmt.Errorf("slurm.time: %v", err)
		}
	}
	if o.Memory != "" {
		if _, err := ParseMemoryMB(o.Memory); err != nil {
			return fmt.Errorf("slurm.memory: %v", err)
		}
	}
	if o.CPUsPerTask < 1 || o.CPUsPerTask > 4096 {
		return fmt.Errorf("slurm.cpus_per_task %d is outside 1–4096", o.CPUsPerTask)
	}
	for _, e := range o.Extra {
		if err := checkExtra(e); err != nil {
			return fmt.Errorf("slurm.extra %q: %v", e, err)
		}
	}
	return nil
}

func checkExtra(e string) error {
	if strings.ContainsAny(e, "\n\r\x00") {
		return fmt.Errorf("an option must fit on one line")
	}
	t := strings.TrimSpace(e)
	if !strings.HasPrefix(t, "-") {
		return fmt.Errorf("an sbatch option starts with - or --")
	}
	name, _, _ := strings.Cut(t, "=")
	name, _, _ = strings.Cut(name, " ")
	for _, o := range owned {
		if name == o || (len(o) == 2 && strings.HasPrefix(name, o) && !strings.HasPrefix(name, "--")) {
			return fmt.Errorf("crestspeed sets %s itself", o)
		}
	}
	return nil
}

// ParseTime reads a Slurm time limit into seconds.
func ParseTime(s string) (int64, error) {
	m := timeRe.FindStringSubmatch(strings.TrimSpace(s))
	if m == nil {
		return 0, fmt.Errorf("%q is not a Slurm time (minutes, hours:minutes:seconds or days-hours:minutes:seconds)", s)
	}
	n := func(i int) int64 {
		if m[i] == "" {
			return 0
		}
		v, err := strconv.ParseInt(m[i], 10, 64)
		if err != nil || v > 1e9 {
			return -1
		}
		return v
	}
	var sec int64
	if m[1] != "" { // days-hours[:minutes[:seconds]]
		d, h, mi, se := n(1), n(2), n(3), n(4)
		if d < 0 || h < 0 || mi < 0 || se < 0 {
			return 0, fmt.Errorf("%q holds a number too large", s)
		}
		sec = ((d*24+h)*60+mi)*60 + se
	} else {
		a, b, c := n(5), n(6), n(7)
		if a < 0 || b < 0 || c < 0 {
			return 0, fmt.Errorf("%q holds a number too large", s)
		}
		switch {
		case m[7] != "": // hours:minutes:seconds
			sec = (a*60+b)*60 + c
		case m[6] != "": // minutes:seconds
			sec = a*60 + b
		default: // minutes
			sec = a * 60
		}
	}
	if sec <= 0 {
		return 0, fmt.Errorf("%q is no time at all", s)
	}
	return sec, nil
}

// ParseMemoryMB reads a Slurm memory size (default unit M, sizes of 1024)
// into mebibytes.
func ParseMemoryMB(s string) (int64, error) {
	m := memRe.FindStringSubmatch(strings.TrimSpace(s))
	if m == nil {
		return 0, fmt.Errorf("%q is not a memory size (a whole number with an optional unit K, M, G or T, e.g. 4G)", s)
	}
	v, err := strconv.ParseInt(m[1], 10, 64)
	if err != nil || v > 1<<40 {
		return 0, fmt.Errorf("%q is too large", s)
	}
	switch strings.ToUpper(m[2]) {
	case "K":
		v = (v + 1023) / 1024
	case "G":
		v *= 1024
	case "T":
		v *= 1024 * 1024
	}
	if v <= 0 {
		return 0, fmt.Errorf("%q is no memory at all", s)
	}
	return v, nil
}
