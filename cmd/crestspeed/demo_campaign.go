package main

import (
	"context"
	"path/filepath"
)

// demoCampaign pools the demo's two deployments — the rendered stereo
// chain (DIR/stereo/tracks) and the long record of maps (DIR/tracks) —
// into a campaign report in DIR/campaign, as a field user pools the
// deployments of a season. Both were tracked with the same configuration,
// so their reference settings agree, as a campaign requires.
func demoCampaign(ctx context.Context, con *console, cfg Config, dir string) error {
	c := cfg
	c.Out = filepath.Join(dir, "campaign")
	con.logf("")
	con.logf("demo: pooling the two deployments into a campaign report in %s", c.Out)
	return Campaign(ctx, con, c, []string{filepath.Join(dir, "stereo", "tracks"), filepath.Join(dir, "tracks")})
}
