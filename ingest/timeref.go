package ingest

import "time"

// TimeReference returns the reference instant of CF time units
// ("seconds since 2026-06-01T00:00:00Z"), UTC when the instant has no
// zone (as in CF and UDUNITS); false when the units have none or it
// cannot be read.
func TimeReference(units string) (time.Time, bool) { return timeReference(units) }
