package report_test

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"

	"sluice/record"
	"sluice/rehearsal"
	"sluice/report"
)

// testRehearsal is invented test data (not a real rehearsal): four worlds,
// two of them misspecified, the raw proposal and two policies. The
// summaries are set by hand, so the page must show exactly these numbers.
func testRehearsal() *rehearsal.Result {
	world := func(i int, k rehearsal.Kind, raw, std, cau float64) rehearsal.Outcome {
		return rehearsal.Outcome{Index: i, Kind: k, Seed: uint64(100 + i), Oracle: rehearsal.Score{TrueGain: 50000},
			Raw: rehearsal.Score{TrueGain: raw}, Policies: []rehearsal.Score{{TrueGain: std}, {TrueGain: cau}}}
	}
	sum := func(name string, pLoss, mean, p05, share, refused float64) rehearsal.Summary {
		return rehearsal.Summary{Name: name, Worlds: 4, PLoss: pLoss, MeanGain: mean, P05Gain: p05, OracleShare: share, Refused: refused,
			ByWorldKind: map[rehearsal.Kind]*rehearsal.Summary{
				rehearsal.WellSpecified: {Worlds: 2, PLoss: 0, OracleShare: share},
				rehearsal.Drift:         {Worlds: 1, PLoss: pLoss, OracleShare: share / 2},
				rehearsal.Break:         {Worlds: 1, PLoss: 1, OracleShare: -0.25},
			}}
	}
	return &rehearsal.Result{
		Seed: 42,
		Worlds: []rehearsal.Outcome{
			world(0, rehearsal.WellSpecified, 40000, 30000, 10000),
			world(1, rehearsal.WellSpecified, 35000, 25000, 0),
			world(2, rehearsal.Drift, -20000, -5000, 0),
			world(3, rehearsal.Break, -60000, -12000, -3000),
		},
		Raw: sum("", 0.5, -1250, -54000, 0.325, 0),
		Policies: []rehearsal.Summary{
			sum("standard", 0.5, 9500, -11000, 0.19, 0.25),
			sum("cautious <b>", 0.25, 1750, -2600, 0.035, 0.5),
		},
		Sizes:       rehearsal.Sizes{BaseDraws: 100, WorldDraws: 60, Replicates: 8, Horizon: 13},
		FailedShare: map[rehearsal.Kind]float64{rehearsal.WellSpecified: 0.05, rehearsal.Drift: 0.2, rehearsal.Break: 0.4},
	}
}

func renderRehearsal(t testing.TB, r *rehearsal.Result) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := report.RenderRehearsal(&b, r); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestRehearsalStructure(t *testing.T) {
	page := renderRehearsal(t, testRehearsal())
	s := string(page)
	doc := parseHTML(t, page)

	// Self-contained: no script, no URL of any scheme.
	for _, bad := range []string{"<script", "http://", "https://", "url(", "xlink:href"} {
		if strings.Contains(s, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	if n := len(byTag(doc, atom.H1)); n != 1 {
		t.Errorf("%d h1 elements, want 1", n)
	}
	var h2 []string
	for _, h := range byTag(doc, atom.H2) {
		h2 = append(h2, text(h))
	}
	want := []string{"What was rehearsed", "Each way of deciding, over all worlds", "Protection against captured gain",
		"How the true gains spread", "By kind of world"}
	if strings.Join(h2, "|") != strings.Join(want, "|") {
		t.Errorf("h2 headings %q, want %q", h2, want)
	}
	if !strings.Contains(text(doc), record.Caution) {
		t.Error("the caution is missing")
	}

	// WCAG 2.1 technique H63: every header cell names its scope.
	for _, th := range byTag(doc, atom.Th) {
		if _, ok := attr(th, "scope"); !ok {
			t.Errorf("th %q has no scope", text(th))
		}
	}
	// The summary table: one row per way of deciding, raw proposal first,
	// the hand-set figures formatted (12.5% is 0.125 as a percentage).
	rows := byTag(byID(t, doc, "summary-table"), atom.Tr)
	if len(rows) != 4 {
		t.Fatalf("summary table has %d rows, want header + 3", len(rows))
	}
	wantRows := [][]string{
		{"raw proposal", "4", "50%", "-1,250", "-54,000", "32.5%", "no gate"},
		{"policy standard", "4", "50%", "+9,500", "-11,000", "19%", "25%"},
		{"policy cautious <b>", "4", "25%", "+1,750", "-2,600", "3.5%", "50%"},
	}
	for i, w := range wantRows {
		var got []string
		for c := rows[i+1].FirstChild; c != nil; c = c.NextSibling {
			if c.Type == html.ElementNode {
				got = append(got, text(c))
			}
		}
		if strings.Join(got, "|") != strings.Join(w, "|") {
			t.Errorf("summary row %d: %q, want %q", i, got, w)
		}
		if rows[i+1].FirstChild.DataAtom != atom.Th {
			t.Errorf("summary row %d does not start with a row header", i)
		}
	}
	if strings.Contains(s, "cautious <b>") {
		t.Error("a policy name reached the page unescaped")
	}

	// Two charts, each an image with a label and a title (WAI-ARIA 1.2 img role).
	svgs := byName(doc, "svg")
	if len(svgs) != 2 {
		t.Fatalf("%d svg charts, want 2 (trade-off, gains)", len(svgs))
	}
	for _, g := range svgs {
		id, _ := attr(g, "id")
		if r, _ := attr(g, "role"); r != "img" {
			t.Errorf("chart %s: role %q, want img", id, r)
		}
		if l, _ := attr(g, "aria-label"); l == "" {
			t.Errorf("chart %s has no aria-label", id)
		}
		if len(byName(g, "title")) == 0 {
			t.Errorf("chart %s has no title", id)
		}
	}
	// The trade-off chart labels every marker with its decider's name.
	trade := byID(t, doc, "chart-tradeoff")
	var labels []string
	for _, tx := range byName(trade, "text") {
		labels = append(labels, text(tx))
	}
	for _, name := range []string{"raw proposal", "policy standard", "policy cautious <b>"} {
		if n := countOf(labels, name); n < 2 { // the marker's label and the legend
			t.Errorf("trade-off chart names %q %d times, want at least 2", name, n)
		}
	}

	// By kind: the well-specified row and the two kinds present, each with
	// worlds, failed share and two cells per decider.
	krows := byTag(byID(t, doc, "kinds-table"), atom.Tr)
	if len(krows) != 2+3 {
		t.Fatalf("kinds table has %d rows, want 2 header rows + 3", len(krows))
	}
	if got := text(krows[3]); !strings.HasPrefix(got, "drift120%") {
		t.Errorf("drift row reads %q", got)
	}
	if n := len(byTag(krows[4], atom.Td)); n != 2+2*3 {
		t.Errorf("break row has %d cells, want 8", n)
	}
	if !strings.Contains(text(doc), "2 of them (50%) broke one assumption of the model: break and drift") {
		t.Error("the explanation does not give the misspecified share and kinds")
	}
}

func countOf(xs []string, s string) int {
	n := 0
	for _, x := range xs {
		if x == s {
			n++
		}
	}
	return n
}

func TestRehearsalNoWorlds(t *testing.T) {
	if err := report.RenderRehearsal(&bytes.Buffer{}, nil); err != report.ErrNoRehearsal {
		t.Errorf("nil result: %v, want ErrNoRehearsal", err)
	}
	// A rehearsal with no decided world has nothing to summarize: the page
	// is refused (issue 11), not drawn over zero worlds.
	r := testRehearsal()
	for i := range r.Worlds {
		r.Worlds[i].Err = "fit failed"
	}
	if err := report.RenderRehearsal(&bytes.Buffer{}, r); err == nil {
		t.Error("a rehearsal with no decided world was rendered")
	}
}

func TestWriteRehearsal(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rehearsal.html")
	if err := report.WriteRehearsal(path, testRehearsal()); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b, renderRehearsal(t, testRehearsal())) {
		t.Error("the file differs from the rendered page")
	}
}

func byID(t testing.TB, doc *html.Node, id string) *html.Node {
	t.Helper()
	es := elements(doc, func(e *html.Node) bool { v, _ := attr(e, "id"); return v == id })
	if len(es) != 1 {
		t.Fatalf("%d elements with id %q, want 1", len(es), id)
	}
	return es[0]
}

// TestRehearsalPageRefusesZeroWorlds: a rehearsal where no world was
// decided has nothing to summarize; the page is refused, not drawn over
// zero worlds.
func TestRehearsalPageRefusesZeroWorlds(t *testing.T) {
	r := &rehearsal.Result{Errors: 1, Worlds: []rehearsal.Outcome{{Err: "fit: x", Stage: "fit"}}}
	var b strings.Builder
	if err := report.RenderRehearsal(&b, r); err == nil || !strings.Contains(err.Error(), "no world") {
		t.Fatalf("err %v; want a refusal naming that no world was decided", err)
	}
	if b.Len() != 0 {
		t.Errorf("wrote %d bytes of a page over zero worlds", b.Len())
	}
}

// TestRehearsalPageShowsCheckRates: the page lists each check's stated and
// realised false-alarm rate and its power, as the result holds them.
func TestRehearsalPageShowsCheckRates(t *testing.T) {
	r := testRehearsal()
	r.Checks = []rehearsal.CheckRate{{Name: "stability/drift", Stated: 0.0167, FalseAlarm: 0.025, Worlds: 40,
		Power: map[rehearsal.Kind]float64{rehearsal.Drift: 0.375}}}
	page := string(renderRehearsal(t, r))
	for _, want := range []string{`id="checks-table"`, "stability/drift", "1.7%", "2.5%", "37.5%"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
}

// TestRehearsalWithWithout: the page's with/without table shows each kind's
// worlds, switched count and, per way of deciding, P(loss) and share of
// the oracle's gain with and without the effectiveness choice, as set by
// hand in the invented result; the drift worlds' drawn sizes are said.
func TestRehearsalWithWithout(t *testing.T) {
	r := testRehearsal()
	sum := func(ploss, share float64) rehearsal.Summary {
		return rehearsal.Summary{Worlds: 1, PLoss: ploss, OracleShare: share}
	}
	r.Effect = []rehearsal.EffectComparison{{Kind: rehearsal.Drift, Worlds: 1, Switched: 1, Deciders: []rehearsal.EffectPair{
		{Name: "raw", With: sum(1, -0.4), Without: sum(0, 0.25)},
		{Name: "standard", With: sum(1, -0.1), Without: sum(0, 0.5)},
		{Name: "cautious <b>", With: sum(0, 0), Without: sum(0, 0.125)},
	}}}
	r.DriftDrawn = &rehearsal.DriftDrawn{Worlds: 1, Rising: 0, Falling: 1, LastThird: 1, Min: 0.55, Max: 0.55}
	doc := parseHTML(t, renderRehearsal(t, r))
	rows := byTag(byID(t, doc, "effect-table"), atom.Tr)
	if len(rows) != 3 {
		t.Fatalf("with/without table has %d rows, want 2 header rows + 1", len(rows))
	}
	var got []string
	for c := rows[2].FirstChild; c != nil; c = c.NextSibling {
		if c.Type == html.ElementNode {
			got = append(got, text(c))
		}
	}
	want := []string{"drift", "1", "1", "100%", "-40%", "0%", "25%", "100%", "-10%", "0%", "50%", "0%", "0%", "0%", "12.5%"}
	if strings.Join(got, "|") != strings.Join(want, "|") {
		t.Errorf("with/without row %q, want %q", got, want)
	}
	if p := text(byID(t, doc, "drift-drawn")); !strings.Contains(p, "0 rising and 1 falling") || !strings.Contains(p, "×0.55 to ×0.55") {
		t.Errorf("drift drawn: %q", p)
	}
}
