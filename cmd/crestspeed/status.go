package main

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"crestspeed/internal/runplan"
)

func init() { extraCommands = append(extraCommands, newStatusCmd) }

func newStatusCmd(app *App) *cobra.Command {
	return &cobra.Command{
		Use:   "status DIR",
		Short: "Show where a run stands: every step done, missing, out of date or failed",
		Long: `Show every step of the run in DIR (see "crestspeed run"): done, not done yet,
out of date (and why), failed (with the end of its log, DIR/logs/STEP.log),
running (a process on this machine holds the step), or, for a run given to
a scheduler, queued or running.

Exits with status 0 only when the run is complete, 3 when it is not.`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usageError{fmt.Errorf("give the run folder: crestspeed status DIR")}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			return Status(cmd.Context(), app.con, args[0])
		},
	}
}

// schedulerStates, when set, returns the state a scheduler gives to the
// steps of the run in dir, by step name ("queued", "running", ...); steps
// it does not list are not in its hands. The Slurm support sets it.
var schedulerStates func(ctx context.Context, dir string) (map[string]string, error)

// statusTailLines is how many lines of a failed step's log status shows.
const statusTailLines = 8

// stepState is the state of one step of a run.
type stepState struct {
	Name  string
	State string // done, missing, out of date, failed, or a scheduler's state
	Why   string
	Tail  []string
}

// runStatus returns the state of every step of the run in dir.
func runStatus(ctx context.Context, dir string) ([]stepState, error) {
	c, rp, err := loadRun(dir)
	if err != nil {
		return nil, err
	}
	steps, err := buildSteps(c, rp, nil)
	if err != nil {
		return nil, err
	}
	var sched map[string]string
	if schedulerStates != nil {
		if sched, err = schedulerStates(ctx, c.Out); err != nil {
			return nil, err
		}
	}
	plan := runplan.Plan{Dir: c.Out, Version: version}
	var out []stepState
	for _, s := range steps {
		ok, why, err := plan.Check(s.Step, false)
		if err != nil {
			return nil, err
		}
		st := stepState{Name: s.Name}
		failed, ferr := os.ReadFile(failedPath(c.Out, s.Name))
		switch {
		case sched[s.Name] != "":
			st.State = sched[s.Name]
		case stepRunning(c.Out, s.Name):
			st.State = "running"
		case ok:
			st.State = "done"
		case ferr == nil:
			st.State, st.Why = "failed", strings.TrimSpace(string(failed))
			st.Tail = tailLines(stepLogPath(c.Out, s.Name), statusTailLines)
		case why == "not done yet":
			st.State = "missing"
		default:
			st.State, st.Why = "out of date", why
		}
		out = append(out, st)
	}
	return out, nil
}

// Status prints the state of every step of the run in dir; it returns an
// incompleteError (exit status 3) unless every step is done.
func Status(ctx context.Context, con *console, dir string) error {
	states, err := runStatus(ctx, dir)
	if err != nil {
		return err
	}
	done := 0
	for _, s := range states {
		line := fmt.Sprintf("%-10s %s", s.Name, s.State)
		if s.Why != "" {
			line += ": " + s.Why
		}
		fmt.Fprintln(con.stdout, line)
		for _, l := range s.Tail {
			fmt.Fprintln(con.stdout, "    | "+l)
		}
		if s.State == "done" {
			done++
		}
	}
	if done == len(states) {
		fmt.Fprintf(con.stdout, "complete: all %d steps done\n", len(states))
		return nil
	}
	return incompleteError{fmt.Errorf("the run in %s is not complete: %d of %d steps done", dir, done, len(states))}
}

// tailLines returns the last n lines of a file (none when it cannot be
// read).
func tailLines(path string, n int) []string {
	f, err := os.Open(path)
	if err != nil {
		return nil
	}
	defer f.Close()
	var lines []string
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 64*1024), 1024*1024)
	for sc.Scan() {
		lines = append(lines, sc.Text())
		if len(lines) > n {
			lines = lines[1:]
		}
	}
	return lines
}
