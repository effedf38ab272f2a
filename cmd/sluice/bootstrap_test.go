package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"sluice/uncertainty"
)

// The bar redraws one line (carriage return, no newline) with the count,
// the rate and the time left, always shows the last replicate, and ends
// with a newline; a nil bar (not a terminal, or --quiet) does nothing.
func TestReplicateBar(t *testing.T) {
	var buf bytes.Buffer
	bar := &replicateBar{w: &buf, start: time.Now().Add(-2 * time.Second)}
	bar.update(1, 4)
	bar.update(2, 4) // within 100 ms of the last draw: skipped
	bar.update(4, 4)
	bar.finish()
	out := buf.String()
	if strings.Count(out, "\r") != 2 || !strings.HasSuffix(out, "\n") || strings.Count(out, "\n") != 1 {
		t.Errorf("bar output %q", out)
	}
	if !strings.Contains(out, "1/4 replicates") || !strings.Contains(out, "[==============================] 4/4 replicates") ||
		!strings.Contains(out, "0s left") || !strings.Contains(out, "/s") {
		t.Errorf("bar output %q lacks count, rate or time left", out)
	}
	var none *replicateBar
	none.finish()
}

func TestParseBlockLength(t *testing.T) {
	for _, c := range []struct {
		in   string
		m    uncertainty.Method
		want float64
		err  string
	}{
		{"auto", uncertainty.MovingBlock, 0, ""},
		{"4", uncertainty.MovingBlock, 4, ""},
		{"2.5", uncertainty.Stationary, 2.5, ""},
		{"0", uncertainty.MovingBlock, 0, "not auto or a number >= 1"},
		{"NaN", uncertainty.MovingBlock, 0, "not auto or a number >= 1"},
		{"four", uncertainty.MovingBlock, 0, "not auto or a number >= 1"},
		{"3", uncertainty.Wild, 0, "no effect with --method wild"},
		{"auto", uncertainty.Wild, 0, ""},
	} {
		got, err := parseBlockLength(c.in, c.m)
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("%q %s: error %v, want %q", c.in, c.m, err, c.err)
			}
			continue
		}
		if err != nil || got != c.want {
			t.Errorf("%q %s = %v, %v; want %v", c.in, c.m, got, err, c.want)
		}
	}
}
