package atomicfile

import (
	"strings"
	"testing"
)

// BenchmarkWriteSet writes a decision-sized set (33 KB record, 35 KB brief
// data, 190 KB brief, the demo's sizes) with its manifest: lock, unnamed
// files, fsyncs, links.
func BenchmarkWriteSet(b *testing.B) {
	dir := b.TempDir()
	files := []File{
		{Name: "decision.json", Data: []byte(strings.Repeat("d", 33<<10)), Perm: 0o644},
		{Name: "brief.json", Data: []byte(strings.Repeat("b", 35<<10)), Perm: 0o644},
		{Name: "report.html", Data: []byte(strings.Repeat("r", 190<<10)), Perm: 0o644},
	}
	for b.Loop() {
		if err := WriteSet(dir, files, SetOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
