package report_test

import (
	"bytes"
	"fmt"
	"io"
	"testing"

	"sluice/report"
)

// wideInput is testInput with its channels repeated up to n channels, the
// design's upper end being about 20.
func wideInput(n int) report.Input {
	in := testInput()
	d := in.Record
	moves, curves := d.Moves, in.Curves
	d.Moves, d.Channels, in.Curves = nil, nil, nil
	for k := range n {
		m, c := moves[k%len(moves)], curves[k%len(curves)]
		name := fmt.Sprintf("%s %d", m.Channel, k/len(moves)+1)
		m.Channel, c.Channel = name, name
		d.Moves, d.Channels, in.Curves = append(d.Moves, m), append(d.Channels, name), append(in.Curves, c)
	}
	return in
}

func benchmarkRender(b *testing.B, in report.Input) {
	var buf bytes.Buffer
	if err := report.Render(&buf, in); err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if err := report.Render(io.Discard, in); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(buf.Len()), "bytes/brief")
}

// BenchmarkRender: six channels, 1,000 draws of the gain, a holdout.
func BenchmarkRender(b *testing.B) { benchmarkRender(b, testInput()) }

// BenchmarkRender20: twenty channels.
func BenchmarkRender20(b *testing.B) { benchmarkRender(b, wideInput(20)) }
