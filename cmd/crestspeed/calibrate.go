package main

// CalibrateConfig configures "crestspeed calibrate" (placeholder until the
// calibration verb lands).
type CalibrateConfig struct{}
