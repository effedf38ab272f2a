package main

import "testing"

// TestPlain: numbers in user text are never in scientific notation. The
// expected strings are written by hand from the inputs (the rounding is to
// significant digits, half away from zero as strconv does).
func TestPlain(t *testing.T) {
	for _, tt := range []struct {
		x    float64
		sig  int
		want string
	}{
		{18130.4, 4, "18,130"},
		{4.07602e10, 6, "40,760,200,000"},
		{0.00012345, 3, "0.000123"},
		{1e-7, 2, "0.0000001"},
		{3.14159, 3, "3.14"},
		{-2.5e5, 3, "-250,000"},
		{0, 3, "0"},
	} {
		if got := plain(tt.x, tt.sig); got != tt.want {
			t.Errorf("plain(%v, %d) = %q, want %q", tt.x, tt.sig, got, tt.want)
		}
	}
	for _, tt := range []struct {
		x    float64
		want string
	}{{1e-7, "0.0000001"}, {2e21, "2000000000000000000000"}, {-0.0000001, "-0.0000001"}, {1.5, "1.5"}} {
		if got := csvNumber(tt.x, 7); got != tt.want {
			t.Errorf("csvNumber(%v) = %q, want %q", tt.x, got, tt.want)
		}
	}
	if got := csvNumber(12461.426153846154, 2); got != "12461.43" {
		t.Errorf("csvNumber = %q, want 12461.43", got)
	}
}
