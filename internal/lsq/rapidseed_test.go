package lsq

import "flag"

// Property tests draw from a fixed seed so that every run, CI's included,
// checks the same cases; pass -rapid.seed to explore others.
func init() { flag.Set("rapid.seed", "20261201") }
