package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"github.com/spf13/viper"

	"crestspeed/internal/runplan"
	"crestspeed/report/campaign"
)

// campaignDirName is the folder of the campaign report in a run of several
// deployments.
const campaignDirName = "campaign"

// loadConfigFile builds the configuration of one deployment file the way
// --config does: defaults, the file, then CRESTSPEED_* variables.
func loadConfigFile(path string) (Config, error) {
	v := viper.New()
	for _, kv := range flatten("", settingsMap(defaultConfig())) {
		v.SetDefault(kv.key, kv.val)
	}
	for _, k := range configKeys() {
		_ = v.BindEnv(k, envName(k))
	}
	if err := readConfigFile(v, path); err != nil {
		return Config{}, err
	}
	c, err := decodeConfig(v)
	if err != nil {
		return Config{}, usageError{err}
	}
	return *c, nil
}

// RunCampaign runs the deployments of the configuration files files into
// DIR/<name>/ (name: the file name without its extension), one after the
// other, then pools their tracks into DIR/campaign with the campaign
// settings of cfg. parts ≥ 0 overrides each deployment's run.parts. The
// campaign is pooled again only when a deployment's tracking changed or its
// settings did.
func RunCampaign(ctx context.Context, con *console, cfg Config, files []string, parts int) error {
	if cfg.Out == "" {
		return usageError{fmt.Errorf("give the campaign's output folder with --out DIR")}
	}
	dir := absPath(cfg.Out)
	names := map[string]string{}
	var deps []Config
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), filepath.Ext(f))
		if name == campaignDirName || name == runplan.StateDir || name == "" {
			return usageError{fmt.Errorf("deployment file %s cannot be used: its name %q is that of the campaign's own folder; rename it", f, name)}
		}
		if other, ok := names[name]; ok {
			return usageError{fmt.Errorf("deployment files %s and %s have the same name %q, and each deployment gets the folder of its name; rename one", other, f, name)}
		}
		names[name] = f
		c, err := loadConfigFile(f)
		if err != nil {
			return err
		}
		c.Out = filepath.Join(dir, name)
		c.Workers, c.Force, c.Quiet = cfg.Workers, cfg.Force, cfg.Quiet
		if c.Workers == 0 {
			c.Workers = runtime.NumCPU()
		}
		if parts >= 0 {
			c.Run.Parts = parts
		}
		deps = append(deps, c)
	}
	var trackDirs, upstream []string
	for i, c := range deps {
		con.logf("run: deployment %d of %d: %s → %s", i+1, len(deps), files[i], c.Out)
		if err := RunDeployment(ctx, con, c); err != nil {
			return fmt.Errorf("deployment %s: %w", files[i], err)
		}
		trackDirs = append(trackDirs, filepath.Join(c.Out, runTracksDir))
		upstream = append(upstream, runplan.Plan{Dir: c.Out, Version: version}.Fingerprint(stepTrack))
	}
	plan := runplan.Plan{Dir: dir, Version: version}
	step := runplan.Step{Name: campaignDirName,
		Settings: map[string]any{"campaign": section(settingsMap(cfg), "campaign"), "deployments": trackDirs},
		Upstream: upstream,
		Outputs:  []string{filepath.Join(campaignDirName, "summary.json"), filepath.Join(campaignDirName, "deployments.csv")}}
	ok, why, err := plan.Check(step, false)
	if err != nil {
		return err
	}
	if ok && !cfg.Force {
		con.logf("run: the campaign report %s is up to date", filepath.Join(dir, campaignDirName))
		return nil
	}
	con.logf("run: campaign: doing it because %s", why)
	if err := plan.Forget(step.Name); err != nil {
		return err
	}
	cc := cfg
	cc.Out, cc.Force = filepath.Join(dir, campaignDirName), false
	if err := os.MkdirAll(cc.Out, 0o755); err != nil {
		return fmt.Errorf("cannot create %s: %w", cc.Out, err)
	}
	if err := claimOutputs(true, inDir(cc.Out, campaign.Outputs...)...); err != nil {
		return err
	}
	if err := Campaign(ctx, con, cc, trackDirs); err != nil {
		return err
	}
	return plan.Done(step)
}
