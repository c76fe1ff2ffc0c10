package slurm

import (
	"reflect"
	"strings"
	"testing"
)

// Outputs below were printed by Slurm 22.05 (Debian 12's slurm-wlm) on the
// cluster of scripts/slurm-local, except the sacct ones, whose form is that
// of sacct -P (fields split by |, array tasks not yet started as ID_[list]).

func TestParseSqueue(t *testing.T) {
	out := "1|3|COMPLETED|None\n1|2|RUNNING|None\n\n7|N/A|PENDING|Dependency\n1|0|CANCELLED|None\n"
	got, err := ParseSqueue(out)
	if err != nil {
		t.Fatal(err)
	}
	want := []Task{{"1", 3, "COMPLETED", "None"}, {"1", 2, "RUNNING", "None"},
		{"7", -1, "PENDING", "Dependency"}, {"1", 0, "CANCELLED", "None"}}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("got %+v, want %+v", got, want)
	}
	classes := []Class{Done, Running, Queued, Failed}
	for i, c := range classes {
		if got[i].Class() != c {
			t.Errorf("%s is %v, want %v", got[i].State, got[i].Class(), c)
		}
	}
	for _, bad := range []string{"1_[0-3]|1|PENDING|None|x", "x|0|RUNNING|None", "1|0-3|PENDING|None", "1|0||None"} {
		if _, err := ParseSqueue(bad); err == nil || !strings.Contains(err.Error(), "squeue line 1") {
			t.Errorf("%q: want an error naming the line, got %v", bad, err)
		}
	}
}

func TestParseSacct(t *testing.T) {
	out := "12|COMPLETED|0:0\n13_0|FAILED|1:0\n13_1|CANCELLED by 0|0:15\n13_[2-4,7%2]|PENDING|0:0\n"
	got, err := ParseSacct(out)
	if err != nil {
		t.Fatal(err)
	}
	want := []Task{{"12", -1, "COMPLETED", "0:0"}, {"13", 0, "FAILED", "1:0"}, {"13", 1, "CANCELLED by 0", "0:15"},
		{"13", 2, "PENDING", "0:0"}, {"13", 3, "PENDING", "0:0"}, {"13", 4, "PENDING", "0:0"}, {"13", 7, "PENDING", "0:0"}}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("got %+v, want %+v", got, want)
	}
	if got[2].Class() != Failed {
		t.Errorf("CANCELLED by 0 is %v, want failed", got[2].Class())
	}
	for _, bad := range []string{"13_[2-4|PENDING|0:0", "13_[4-2]|PENDING|0:0", "13_[0-99999999]|PENDING|0:0", "a|COMPLETED|0:0", "13|COMPLETED", "13||0:0"} {
		if _, err := ParseSacct(bad); err == nil {
			t.Errorf("%q: want an error", bad)
		}
	}
}

func TestParseSubmit(t *testing.T) {
	for in, want := range map[string]string{"42\n": "42", "42;cluster\n": "42", "sbatch: warning: x\n43\n": "43"} {
		got, err := ParseSubmit(in)
		if err != nil || got != want {
			t.Errorf("%q: got %q %v, want %q", in, got, err, want)
		}
	}
	for _, bad := range []string{"", "Submitted batch job 42", ";x", "-1"} {
		if _, err := ParseSubmit(bad); err == nil {
			t.Errorf("%q: want an error", bad)
		}
	}
}

func TestClassOf(t *testing.T) {
	for s, c := range map[string]Class{"PENDING": Queued, "REQUEUED": Queued, "RUNNING": Running, "COMPLETING": Running,
		"COMPLETED": Done, "TIMEOUT": Failed, "OUT_OF_MEMORY": Failed, "NODE_FAIL": Failed, "CANCELLED+": Failed, "WHATEVER": Unknown} {
		if ClassOf(s) != c {
			t.Errorf("%s: %v, want %v", s, ClassOf(s), c)
		}
	}
}

func TestParseTimeAndMemory(t *testing.T) {
	// the forms of sbatch --time (sbatch(1), Slurm 22.05)
	for s, want := range map[string]int64{"90": 5400, "90:30": 5430, "1:02:03": 3723, "2-0": 172800, "1-2:03": 93780, "1-2:03:04": 93784} {
		got, err := ParseTime(s)
		if err != nil || got != want {
			t.Errorf("time %q: %d %v, want %d", s, got, err, want)
		}
	}
	for _, bad := range []string{"", "0", "1h", "1:2:3:4", "-1", "1-", "99999999999"} {
		if _, err := ParseTime(bad); err == nil {
			t.Errorf("time %q: want an error", bad)
		}
	}
	for s, want := range map[string]int64{"4G": 4096, "500": 500, "2048K": 2, "1T": 1 << 20, "3m": 3} {
		got, err := ParseMemoryMB(s)
		if err != nil || got != want {
			t.Errorf("memory %q: %d %v, want %d", s, got, err, want)
		}
	}
	for _, bad := range []string{"", "0", "4GB", "1.5G", "-4G"} {
		if _, err := ParseMemoryMB(bad); err == nil {
			t.Errorf("memory %q: want an error", bad)
		}
	}
}

func TestValidate(t *testing.T) {
	if err := DefaultOptions().Validate(); err != nil {
		t.Fatalf("defaults: %v", err)
	}
	for _, c := range []struct {
		mod  func(*Options)
		want string
	}{
		{func(o *Options) { o.Partition = "a b" }, "slurm.partition"},
		{func(o *Options) { o.Account = "x;y" }, "slurm.account"},
		{func(o *Options) { o.Time = "1h" }, "slurm.time"},
		{func(o *Options) { o.Memory = "4GB" }, "slurm.memory"},
		{func(o *Options) { o.CPUsPerTask = 0 }, "slurm.cpus_per_task"},
		{func(o *Options) { o.Extra = []string{"qos=long"} }, "starts with -"},
		{func(o *Options) { o.Extra = []string{"--array=0-9"} }, "sets --array"},
		{func(o *Options) { o.Extra = []string{"-o x.log"} }, "sets -o"},
		{func(o *Options) { o.Extra = []string{"--qos=a\n--x"} }, "one line"},
	} {
		o := DefaultOptions()
		c.mod(&o)
		err := o.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: got %v, want an error with %q", o, err, c.want)
		}
	}
	o := DefaultOptions()
	o.Extra = []string{"--qos=long", "--constraint=skylake", "--exclusive"}
	if err := o.Validate(); err != nil {
		t.Errorf("plain extra options refused: %v", err)
	}
}

func TestRender(t *testing.T) {
	if got := ArraySpec([]int{7, 0, 1, 2, 3, 5, 8}); got != "0-3,5,7-8" {
		t.Errorf("ArraySpec: %q", got)
	}
	o := Options{Partition: "short", Account: "ocean", Time: "1:00:00", Memory: "2G", CPUsPerTask: 3, Extra: []string{" --qos=low"}}
	s, err := Render(o, Script{Name: "cs-finish", After: []string{"12", "13_4"}, Log: "/x/slurm/finish_%j.log", Dir: "/x",
		Body: []string{"exec " + Quote("/opt/my bin/crestspeed") + " run-step"}})
	if err != nil {
		t.Fatal(err)
	}
	want := `#!/bin/bash
#SBATCH --job-name=cs-finish
#SBATCH --dependency=afterok:12:13_4
#SBATCH --kill-on-invalid-dep=yes
#SBATCH --output=/x/slurm/finish_%j.log
#SBATCH --chdir=/x
#SBATCH --partition=short
#SBATCH --account=ocean
#SBATCH --time=1:00:00
#SBATCH --mem=2G
#SBATCH --cpus-per-task=3
#SBATCH --qos=low
set -euo pipefail
exec '/opt/my bin/crestspeed' run-step
`
	if s != want {
		t.Errorf("got\n%s\nwant\n%s", s, want)
	}
	for _, bad := range []Script{{Name: "a b", Log: "x"}, {Name: "a", Log: ""}, {Name: "a", Log: "x y"},
		{Name: "a", Log: "x", Tasks: []int{-1}}, {Name: "a", Log: "x", After: []string{"1;rm"}}, {Name: "a", Log: "x", After: []string{"1_x"}}, {Name: "a", Log: "x", Body: []string{"a\nb"}}} {
		if _, err := Render(DefaultOptions(), bad); err == nil {
			t.Errorf("%+v: want an error", bad)
		}
	}
}

func FuzzParseSqueue(f *testing.F) {
	f.Add("1|3|COMPLETED|None\n7|N/A|PENDING|Dependency\n")
	f.Add("1|x|||\n")
	f.Fuzz(func(t *testing.T, s string) {
		ts, err := ParseSqueue(s)
		if err == nil {
			for _, x := range ts {
				if x.Index < -1 || x.State == "" {
					t.Fatalf("accepted %+v", x)
				}
			}
		}
	})
}

func FuzzParseSacct(f *testing.F) {
	f.Add("12|COMPLETED|0:0\n13_[2-4,7%2]|PENDING|0:0\n13_1|CANCELLED by 0|0:15\n")
	f.Add("1_[0-1000000]|PENDING|0:0")
	f.Fuzz(func(t *testing.T, s string) {
		ts, err := ParseSacct(s)
		if err == nil && len(ts) > maxExpand*(strings.Count(s, "\n")+1) {
			t.Fatalf("%d tasks from %d bytes", len(ts), len(s))
		}
	})
}

func FuzzParseSubmit(f *testing.F) {
	f.Add("42;cluster\n")
	f.Fuzz(func(t *testing.T, s string) {
		id, err := ParseSubmit(s)
		if err == nil && (id == "" || strings.ContainsAny(id, " ;\n")) {
			t.Fatalf("accepted %q as %q", s, id)
		}
	})
}

func FuzzParseTime(f *testing.F) {
	f.Add("1-2:03:04")
	f.Fuzz(func(t *testing.T, s string) {
		if v, err := ParseTime(s); err == nil && v <= 0 {
			t.Fatalf("%q gave %d", s, v)
		}
		if v, err := ParseMemoryMB(s); err == nil && v <= 0 {
			t.Fatalf("%q gave %d MB", s, v)
		}
	})
}
