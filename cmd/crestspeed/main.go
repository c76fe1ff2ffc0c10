// Command crestspeed finds and follows wave crests and whitecaps in
// sea-surface stereo recordings or elevation maps and measures their speed
// against the nominal phase speed of their carrier waves.
//
// This file holds only wiring: the root command, configuration loading
// (flags > environment CRESTSPEED_* > config file > defaults), logging and
// progress display. The science lives in the packages it calls.
package main

import (
	"context"
	"crestspeed/speed/analysis"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime"
	"runtime/pprof"
	"strings"
	"syscall"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/viper"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

// App is the command line: it turns flags, environment and config file into
// a Config, then hands that to a verb function. Verb functions (Track,
// Reconstruct, ...) take their whole configuration as a value and share no
// mutable state.
type App struct {
	V        *viper.Viper
	con      *console
	cfg      *Config
	bindings map[*cobra.Command][]binding
	// stopProfile ends the CPU profile asked for with --cpu-profile.
	stopProfile func()
}

// newApp returns a command line writing results to stdout and log lines
// to stderr.
func newApp(stdout, stderr io.Writer) *App {
	return &App{V: viper.New(), con: &console{stdout: stdout, stderr: stderr}}
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	app := newApp(os.Stdout, os.Stderr)
	root := newRootCmd(app)
	err := root.ExecuteContext(ctx)
	if app.stopProfile != nil {
		app.stopProfile()
	}
	if err != nil {
		if errors.Is(err, context.Canceled) {
			err = errors.New("interrupted; finished outputs are kept and no partial file is left")
			fmt.Fprintln(os.Stderr, "crestspeed: "+sentence(err))
			os.Exit(exitInterrupted)
		}
		fmt.Fprintln(os.Stderr, "crestspeed: "+sentence(err))
		os.Exit(exitCode(err))
	}
}

// usageError marks an error in how the tool was called (exit status 2).
type usageError struct{ error }

func (u usageError) Unwrap() error { return u.error }

// Exit statuses, the same for every verb (the README has the table).
const (
	exitOK          = 0   // done
	exitFailed      = 1   // an input could not be analysed or an output not written
	exitUsage       = 2   // the command line or configuration is wrong; nothing was done
	exitIncomplete  = 3   // status: the run is not complete (parts queued, running or failed)
	exitInterrupted = 130 // stopped by SIGINT or SIGTERM; finished outputs kept, no partial ones
)

// incompleteError marks a run that is not finished (exit status 3).
type incompleteError struct{ error }

func (e incompleteError) Unwrap() error { return e.error }

func exitCode(err error) int {
	var u usageError
	var inc incompleteError
	switch {
	case err == nil:
		return exitOK
	case errors.As(err, &u), errors.Is(err, analysis.ErrSetting):
		return exitUsage
	case errors.As(err, &inc):
		return exitIncomplete
	case errors.Is(err, context.Canceled):
		return exitInterrupted
	}
	return exitFailed
}

// sentence makes sure an error message reads as one sentence.
func sentence(err error) string {
	s := strings.TrimSpace(err.Error())
	if s == "" {
		return "failed."
	}
	if !strings.HasSuffix(s, ".") {
		s += "."
	}
	return s
}

func newRootCmd(app *App) *cobra.Command {
	root := &cobra.Command{
		Use:   "crestspeed",
		Short: "Wave-crest and whitecap speeds from sea-surface stereo recordings",
		Long: `crestspeed turns the recordings of a sea-surface stereo camera rig, or elevation
maps already reconstructed from one, into tracked wave crests and whitecaps,
their speeds relative to the nominal phase speed of their carrier waves, and
deployment statistics split by crest steepness.

Settings come, in order of precedence, from command-line flags, environment
variables CRESTSPEED_<SECTION>_<KEY> (for example CRESTSPEED_TRACK_DEPTH_M),
the YAML file given with --config, and built-in defaults. "crestspeed init"
writes a commented template of every setting.

Results are research estimates, not a safety or navigation system.`,
		SilenceUsage:  true,
		SilenceErrors: true,
		PersistentPreRunE: func(cmd *cobra.Command, args []string) error {
			if err := app.startProfile(cmd); err != nil {
				return err
			}
			return app.load(cmd)
		},
	}
	pf := root.PersistentFlags()
	pf.String("config", "", "YAML configuration file")
	pf.String("out", "", "output directory or file (see each command)")
	pf.Int("workers", 0, "worker goroutines (0 = number of CPU cores)")
	pf.Bool("quiet", false, "print only errors")
	pf.Bool("force", false, "overwrite finished outputs")
	pf.String("cpu-profile", "", "write a CPU profile of the command to this `FILE`, for go tool pprof")
	root.AddCommand(
		newVersionCmd(app),
		newInitCmd(app),
		newSynthesizeCmd(app),
		newDemoCmd(app),
	)
	for _, extra := range extraCommands {
		root.AddCommand(extra(app))
	}
	return root
}

// extraCommands lets verbs living in their own files register themselves
// from an init function, keeping this file free of per-verb edits.
var extraCommands []func(*App) *cobra.Command

func newVersionCmd(app *App) *cobra.Command {
	return &cobra.Command{
		Use:   "version",
		Short: "Print the version of crestspeed",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			fmt.Fprintf(app.con.stdout, "crestspeed %s (%s, %s/%s)\n", version, runtime.Version(), runtime.GOOS, runtime.GOARCH)
			return nil
		},
	}
}

// elapsed formats a duration for log lines.
func elapsed(t0 time.Time) string { return time.Since(t0).Round(time.Millisecond).String() }

// startProfile starts the CPU profile --cpu-profile asks for.
func (app *App) startProfile(cmd *cobra.Command) error {
	path, _ := cmd.Flags().GetString("cpu-profile")
	if path == "" {
		return nil
	}
	f, err := os.Create(path)
	if err != nil {
		return usageError{fmt.Errorf("--cpu-profile: %w", err)}
	}
	if err := pprof.StartCPUProfile(f); err != nil {
		f.Close()
		return fmt.Errorf("--cpu-profile: %w", err)
	}
	app.stopProfile = func() {
		pprof.StopCPUProfile()
		f.Close()
	}
	return nil
}
