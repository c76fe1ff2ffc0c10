package main

import (
	"fmt"
	"math"

	"crestspeed/ingest"
	"crestspeed/report/summary"
)

// SiteConfig places a deployment on the Earth: written into the elevation
// maps a reconstruction makes, and used by track to give directions as
// true bearings. Values given here override those recorded in an input
// file.
type SiteConfig struct {
	// Name of the site and of the platform the rig stands on.
	Name     string `yaml:"name"`
	Platform string `yaml:"platform"`
	// HeadingDeg is the bearing of the grid's +x axis, degrees clockwise
	// from true north.
	HeadingDeg *float64 `yaml:"heading_deg,omitempty"`
	// LatitudeDeg and LongitudeDeg (WGS 84) of the grid origin (below the
	// left camera for a reconstruction).
	LatitudeDeg  *float64 `yaml:"latitude_deg,omitempty"`
	LongitudeDeg *float64 `yaml:"longitude_deg,omitempty"`
}

// check refuses an impossible site.
func (s SiteConfig) check() error {
	fin := func(p *float64) bool { return p == nil || (!math.IsNaN(*p) && !math.IsInf(*p, 0)) }
	switch {
	case !fin(s.HeadingDeg) || (s.HeadingDeg != nil && math.Abs(*s.HeadingDeg) > 360):
		return fmt.Errorf("site.heading_deg %g is not a bearing within ±360°", *s.HeadingDeg)
	case !fin(s.LatitudeDeg) || (s.LatitudeDeg != nil && math.Abs(*s.LatitudeDeg) >= 89):
		return fmt.Errorf("site.latitude_deg %g is outside (−89°, 89°)", *s.LatitudeDeg)
	case !fin(s.LongitudeDeg) || (s.LongitudeDeg != nil && math.Abs(*s.LongitudeDeg) > 360):
		return fmt.Errorf("site.longitude_deg %g is outside ±360°", *s.LongitudeDeg)
	case (s.LatitudeDeg == nil) != (s.LongitudeDeg == nil):
		return fmt.Errorf("give site.latitude_deg and site.longitude_deg together")
	case s.LatitudeDeg != nil && s.HeadingDeg == nil:
		return fmt.Errorf("a position (site.latitude_deg, site.longitude_deg) needs the grid's heading too (site.heading_deg)")
	}
	return nil
}

// georef is the site's georeference for a writer, nil without a heading.
func (s SiteConfig) georef() *ingest.Georef {
	if s.HeadingDeg == nil {
		return nil
	}
	g := &ingest.Georef{HeadingDeg: *s.HeadingDeg, LatDeg: math.NaN(), LonDeg: math.NaN()}
	if s.LatitudeDeg != nil {
		g.LatDeg, g.LonDeg = *s.LatitudeDeg, *s.LongitudeDeg
	}
	return g
}

// siteSummary merges the configured site with what the record says of
// itself (its site and platform attributes, its georeference); nil when
// nothing at all is known.
func siteSummary(s SiteConfig, meta ingest.ElevationMeta) *summary.SiteSummary {
	out := &summary.SiteSummary{Name: s.Name, Platform: s.Platform,
		GridHeading: math.NaN(), Latitude: math.NaN(), Longitude: math.NaN()}
	if out.Name == "" {
		out.Name = meta.Attrs["site"]
	}
	if out.Platform == "" {
		out.Platform = meta.Attrs["platform"]
	}
	g, src := s.georef(), "configuration (site)"
	if g == nil && meta.Georef != nil {
		g, src = meta.Georef, "attributes of the input file"
	}
	if g != nil {
		out.GridHeading, out.Latitude, out.Longitude, out.Source = g.HeadingDeg, g.LatDeg, g.LonDeg, src
	}
	if out.Name == "" && out.Platform == "" && g == nil {
		return nil
	}
	return out
}
