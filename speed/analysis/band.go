package analysis

import (
	"fmt"

	"crestspeed/ingest"
	"crestspeed/speed"
)

// Band is the dominant-wave band the crests were found in (Options.
// DominantBandFp): multiples of the record's F_p, and the same band in Hz
// and in wavenumber (rad/m) at the record's depth.
type Band struct {
	LowFp, HighFp float64
	LowHz, HighHz float64
	LowK, HighK   float64
}

// bandSource reads a record through speed.BandPass: each frame less the
// record's per-cell mean, filtered to the band. The crest pass then
// removes no mean of its own.
type bandSource struct {
	Source
	bp   *speed.BandPass
	mean []float32
	work []float32
}

// newBandSource reads src through the band fp (multiples of the record's
// F_p), and returns the band in all its units.
func newBandSource(src Source, mean []float32, rec *Record, fp [2]float64) (*bandSource, *Band, error) {
	g := rec.Meta.Grid
	ss := rec.SeaState
	bp, err := speed.NewBandPass(g.Nx(), g.Ny(), g.Dx(), g.Dy(), rec.Refs.DepthM, fp[0]*ss.Fp, fp[1]*ss.Fp)
	if err != nil {
		return nil, nil, fmt.Errorf("%w: dominant_band_fp %v: %w", ErrSetting, fp, err)
	}
	b := &Band{LowFp: fp[0], HighFp: fp[1], LowHz: bp.LowHz, HighHz: bp.HighHz, LowK: bp.LowK, HighK: bp.HighK}
	return &bandSource{Source: src, bp: bp, mean: mean, work: make([]float32, g.Nx()*g.Ny())}, b, nil
}

func (b *bandSource) Next(f *ingest.Frame) error {
	if err := b.Source.Next(f); err != nil {
		return err
	}
	for i, m := range b.mean {
		f.Eta[i] -= m
	}
	b.bp.Apply(f.Eta, b.work)
	return nil
}

func (b *bandSource) Close() { b.bp.Close() }
