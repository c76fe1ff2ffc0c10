package main

import (
	"context"
	"errors"
	"fmt"

	"github.com/spf13/cobra"

	"crestspeed/report/campaign"
)

// CampaignConfig configures "crestspeed campaign": the campaign package's
// options (the track folders are the verb's arguments).
type CampaignConfig struct {
	campaign.Options `yaml:",inline"`
}

func defaultCampaignConfig() CampaignConfig {
	return CampaignConfig{Options: campaign.DefaultOptions()}
}

func newCampaignCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "campaign --out DIR TRACKDIR...",
		Short: "Pool the track folders of several deployments into one campaign report",
		Long: `Pool the folders "crestspeed track" wrote for several deployments into one
campaign report: crest-speed (c_cr/c_p, c_cr/c_loc) and whitecap front-speed
(c_br/c_p) statistics by steepness class over all deployments, with bootstrap
intervals that resample whole tracks within each deployment; each deployment's
site, start and end (UTC), Hm0, Tp, c_p, direction, counts and median ratios per
class; the medians against peak steepness Hm0 k_p/2 and, where the record has a
wind speed, wave age c_p/U; and the breaking-front distribution against c/c_p.

Deployments must share their reference settings (definitions of S_c, c_p and
c_loc, the crest-speed fit, the smallest crests and whitecap patches kept);
one that differs is refused. Other steepness classes are converted exactly.

Writes report.html, deployments.csv, summary.json, crest_tracks.nc and
whitecap_tracks.nc (the rows of every deployment as CF-1.8 trajectories) and
figures/ into --out. Finished outputs are kept unless --force is given.`,
		RunE: func(cmd *cobra.Command, args []string) error {
			return Campaign(cmd.Context(), app.con, *app.cfg, args)
		},
	}
	f := cmd.Flags()
	f.Int("resamples", 0, "bootstrap resamples for the 90 % confidence intervals")
	f.Uint64("seed", 0, "seed of the bootstrap resampling")
	app.bindFlag(cmd, "resamples", "campaign.bootstrap_resamples")
	app.bindFlag(cmd, "seed", "campaign.bootstrap_seed")
	return cmd
}

func init() { extraCommands = append(extraCommands, newCampaignCmd) }

// Campaign pools the track folders dirs into the campaign report in
// cfg.Out.
func Campaign(ctx context.Context, con *console, cfg Config, dirs []string) error {
	switch {
	case len(dirs) == 0:
		return usageError{fmt.Errorf("give the track folders of the deployments: crestspeed campaign --out DIR TRACKDIR...")}
	case cfg.Out == "":
		return usageError{fmt.Errorf("give the output folder of the campaign with --out DIR")}
	}
	for _, d := range dirs {
		if samePath(d, cfg.Out) {
			return usageError{fmt.Errorf("the output folder %s is the track folder of a deployment; give the campaign its own folder with --out", cfg.Out)}
		}
	}
	opt := cfg.Campaign.Options
	opt.Version, opt.Config, opt.Bootstrap.Workers = version, settingsMap(cfg), cfg.Workers
	if err := opt.Validate(); err != nil {
		return usageError{fmt.Errorf("campaign settings: %w", err)}
	}
	if err := claimOutputs(cfg.Force, inDir(cfg.Out, campaign.Outputs...)...); err != nil {
		return err
	}
	deps, err := campaign.Load(dirs)
	if errors.Is(err, campaign.ErrDuplicate) {
		return usageError{err}
	}
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	res, err := campaign.Analyse(deps, opt)
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := campaign.Write(cfg.Out, res); err != nil {
		return err
	}
	s := res.Summary
	c := s.Campaign.Counts
	all := s.Campaign.CrestRatio["peak"].All
	con.logf("campaign: %d deployments, %d crest tracks, %d rows with a speed; pooled c_cr/c_p median %.3f (90 %% interval %.3f–%.3f), mode %.3f",
		c.Deployments, c.CrestTracks, c.CrestRowsWithSpeed, all.Median, all.MedianCI.Lo, all.MedianCI.Hi, all.Mode)
	for _, w := range append(append([]string{}, s.Warnings...), s.Settings.Conversions...) {
		con.logf("campaign: %s", w)
	}
	fmt.Fprintln(con.stdout, s.Outputs["report.html"])
	return nil
}
