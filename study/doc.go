// Package study holds the simulation studies that grade the whole
// estimator — the MAP fit, the lift-calibrated likelihood, the bootstrap
// and the allocator's raw proposal — against the truth of simulated
// worlds, computed by package groundtruth apart from the code under test.
// It has no code of its own beyond the helpers of its tests; the studies
// are slow and skip under -short.
package study
