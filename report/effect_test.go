package report_test

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/report"
)

// testEffect is an invented drifting channel over the weeks of
// testContributions: effectiveness rising linearly from 800 to 1,200 (its
// average is 1,000, so the last week is 1.2 times the average), a band of
// ±10% around it; the recorded change 1.2 with interval 1.1 to 1.3.
func testEffect() []report.EffectPath {
	c := testContributions()
	e := report.EffectPath{Channel: "search", Weeks: c.Weeks, Change: 1.2, Low: 1.1, High: 1.3}
	n := len(c.Weeks)
	for t := range n {
		v := 800 + 400*float64(t)/float64(n-1)
		e.Path = append(e.Path, v)
		e.PathLow = append(e.PathLow, 0.9*v)
		e.PathHigh = append(e.PathHigh, 1.1*v)
	}
	return []report.EffectPath{e}
}

// TestBriefEffectChart: the effectiveness-over-time section appears only
// when the decision let a channel drift, with one chart and a caption
// whose figures are the input's (1.2 → "20% above", 1.1 and 1.3 → "+10%
// to +30%": arithmetic on the invented values); a path of the wrong
// length is an error naming the channel, not a broken chart.
func TestBriefEffectChart(t *testing.T) {
	plain := render(t, testInput())
	if bytes.Contains(plain, []byte(`id="effect-over-time"`)) || bytes.Contains(plain, []byte("Effectiveness that changed over time")) {
		t.Error("a brief without a drifting channel shows the effectiveness chart")
	}
	in := testInput()
	in.Effect = testEffect()
	raw := render(t, in)
	s := string(raw)
	if n := strings.Count(s, `id="effect-over-time"`); n != 1 {
		t.Fatalf("%d effectiveness figures, want 1", n)
	}
	sec := s[strings.Index(s, `<section id="effect"`):]
	sec = sec[:strings.Index(sec, "</section>")]
	if n := strings.Count(sec, "<svg"); n != 1 {
		t.Errorf("%d charts in the effectiveness section, want 1", n)
	}
	for _, want := range []string{"<h2 id=\"h-effect\">Effectiveness that changed over time</h2>",
		"search&#39;s effectiveness in the last week is 20% above its history average (90% interval +10% to +30%)"} {
		if !strings.Contains(sec, want) {
			t.Errorf("the effectiveness section lacks %q", want)
		}
	}
	in.Effect[0].PathLow = in.Effect[0].PathLow[1:]
	var buf bytes.Buffer
	if err := report.Render(&buf, in); err == nil || !strings.Contains(err.Error(), "search") || buf.Len() != 0 {
		t.Errorf("a short band: err %v, %d bytes written", err, buf.Len())
	}
}

// TestBriefPrintsWithEffect: with the effectiveness chart the invented
// six-channel brief still prints on at most six pages (the issue's
// budget), counted by headless Chromium as TestBriefPrints does.
func TestBriefPrintsWithEffect(t *testing.T) {
	needChromium(t)
	page := filepath.Join(t.TempDir(), "brief.html")
	in := testInput()
	in.Effect = testEffect()
	if err := report.Write(page, in); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(page); err != nil {
		t.Fatal(err)
	}
	if n := printedPages(t, page); n < 1 || n > 6 {
		t.Errorf("the brief with the effectiveness chart prints on %d pages, want 1 to 6", n)
	} else {
		t.Logf("the brief with the effectiveness chart prints on %d pages", n)
	}
}
