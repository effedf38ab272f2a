package report_test

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"

	"sluice/gate"
	"sluice/record"
	"sluice/report"
)

func render(t testing.TB, in report.Input) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := report.Render(&buf, in); err != nil {
		t.Fatalf("Render: %v", err)
	}
	return buf.Bytes()
}

// TestBriefStructure renders the invented decision and reads the page
// back as a browser would (WHATWG parsing, golang.org/x/net/html).
func TestBriefStructure(t *testing.T) {
	in := testInput()
	raw := render(t, in)
	doc := parseHTML(t, raw)
	t.Logf("brief for %d channels: %d bytes", len(in.Curves), len(raw))

	// 1.5 MB is the brief's size budget for six channels (the issue).
	if len(raw) > 1_500_000 {
		t.Errorf("brief is %d bytes, over the 1.5 MB budget", len(raw))
	}

	t.Run("headings", func(t *testing.T) {
		want := []string{
			"h1 Test Co. (test data): paid-media budget decision",
			"h2 The decision",
			"h2 What we ask you to sign",
			"h2 Risk of the approved plan",
			"h2 What a different budget would buy",
			"h2 The moves in detail", "h3 Why moves were held back",
			"h2 How the model explains the past", "h3 Contributions over time", "h3 Actual against fitted",
			"h2 Forecast of weeks the model did not see",
			"h2 Response curves",
		}
		for _, m := range testMoves {
			want = append(want, "h3 "+m.name) // the channel's name, escaped on the way in, as it was
		}
		want = append(want, "h2 The evidence", "h2 Rerunning this decision")
		var got []string
		level := 0
		for _, h := range byTag(doc, atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6) {
			got = append(got, h.Data+" "+text(h))
			// WCAG 2.1 technique G141 (headings that reflect the page's
			// organization): a level never skips on the way down.
			l := int(h.Data[1] - '0')
			if l > level+1 {
				t.Errorf("heading %q at level %d follows level %d", text(h), l, level)
			}
			level = l
		}
		if !slices.Equal(got, want) {
			t.Errorf("headings\n got %q\nwant %q", got, want)
		}
		if n := len(byTag(doc, atom.H1)); n != 1 {
			t.Errorf("%d h1 elements, want 1", n)
		}
	})

	t.Run("evidence table", func(t *testing.T) {
		tables := elements(doc, func(e *html.Node) bool {
			id, _ := attr(e, "id")
			return e.DataAtom == atom.Table && id == "evidence-table"
		})
		if len(tables) != 1 {
			t.Fatalf("%d evidence tables, want 1", len(tables))
		}
		tab := tables[0]
		var head []string
		for _, th := range byTag(byTag(tab, atom.Thead)[0], atom.Th) {
			head = append(head, text(th))
			if s, _ := attr(th, "scope"); s != "col" {
				t.Errorf("header cell %q has scope %q, want col", text(th), s)
			}
		}
		wantHead := []string{"Check: what it asks", "Status", "Channel", "What was found", "What the policy did"}
		if !slices.Equal(head, wantHead) {
			t.Errorf("evidence header %q, want %q", head, wantHead)
		}
		// Failures first, then warnings; the passed checks are counted,
		// not listed; the status is a word.
		var status, names, scopes []string
		for _, tr := range byTag(byTag(tab, atom.Tbody)[0], atom.Tr) {
			cells := elements(tr, func(e *html.Node) bool { return e.DataAtom == atom.Td || e.DataAtom == atom.Th })
			status = append(status, text(cells[1]))
			names = append(names, text(cells[0]))
			scopes = append(scopes, text(cells[2]))
		}
		wantStatus := []string{"FAILED", "WARNING", "WARNING"}
		if !slices.Equal(status, wantStatus) {
			t.Errorf("statuses %q, want %q", status, wantStatus)
		}
		// Stable within a status: record order; each with its meaning.
		wantNames := []string{"lift_agreement", "holdout_mape", "residual_bias"}
		for i, n := range names {
			if i >= len(wantNames) || !strings.HasPrefix(n, wantNames[i]) || len(n) < len(wantNames[i])+10 {
				t.Errorf("check %d is %q, want %s followed by its meaning", i, n, wantNames[i])
			}
		}
		if want := []string{"online video", "all channels", "all channels"}; !slices.Equal(scopes, want) {
			t.Errorf("channels %q, want %q", scopes, want)
		}
		if body := bodyText(doc); !strings.Contains(body, "6 checks: 1 failed, 2 warned, 3 passed (not listed).") {
			t.Errorf("passed checks are not collapsed into a count")
		}
	})

	t.Run("tables", func(t *testing.T) {
		// WCAG 2.1 techniques H39 (caption) and H63 (scope on header cells).
		for _, tab := range byTag(doc, atom.Table) {
			if len(byTag(tab, atom.Caption)) != 1 {
				t.Errorf("table %q has no caption", text(tab)[:40])
			}
			for _, th := range byTag(tab, atom.Th) {
				if s, _ := attr(th, "scope"); s != "col" && s != "row" {
					t.Errorf("header cell %q has scope %q", text(th), s)
				}
			}
		}
	})

	t.Run("charts", func(t *testing.T) {
		svgs := byName(doc, "svg")
		if want := len(in.Curves) + 5; len(svgs) != want {
			t.Errorf("%d charts, want %d (a curve per channel, moves, gains, holdout, contributions, fit)", len(svgs), want)
		}
		for _, s := range svgs {
			if s.Namespace != "svg" {
				t.Errorf("chart parsed in namespace %q, want svg", s.Namespace)
			}
			if r, _ := attr(s, "role"); r != "img" {
				t.Errorf("chart has role %q, want img", r)
			}
			label, _ := attr(s, "aria-label")
			titles := byName(s, "title")
			if label == "" || len(titles) == 0 || text(titles[0]) == "" {
				t.Errorf("chart without an accessible name: aria-label %q, %d titles", label, len(titles))
			}
			if vb, _ := attr(s, "viewBox"); vb == "" {
				t.Errorf("chart without a viewBox")
			}
			if len(byName(s, "text")) == 0 {
				t.Errorf("chart %q has no text", label)
			}
		}
		if !strings.Contains(string(raw), "Liberation Sans',Arimo,Arial,Helvetica,sans-serif") {
			t.Errorf("chart text does not name the generic font stack")
		}
	})

	t.Run("ids", func(t *testing.T) {
		seen := map[string]bool{}
		for _, e := range elements(doc, func(*html.Node) bool { return true }) {
			if id, ok := attr(e, "id"); ok {
				if seen[id] {
					t.Errorf("id %q used twice", id)
				}
				seen[id] = true
			}
		}
	})

	t.Run("self-contained", func(t *testing.T) {
		for _, s := range []string{"http://", "https://", "@import", "url(", "@font-face", "<?xml", "xmlns"} {
			if bytes.Contains(bytes.ToLower(raw), []byte(s)) {
				t.Errorf("brief contains %q", s)
			}
		}
		for _, tag := range []atom.Atom{atom.Script, atom.Link, atom.Img, atom.Iframe, atom.Object, atom.Embed, atom.Image} {
			if n := len(byTag(doc, tag)); n > 0 {
				t.Errorf("%d <%s> elements", n, tag)
			}
		}
		for _, e := range elements(doc, func(*html.Node) bool { return true }) {
			for _, a := range e.Attr {
				if a.Key == "src" || a.Key == "href" || a.Key == "xlink:href" || strings.HasPrefix(a.Key, "on") {
					t.Errorf("<%s> has attribute %s=%q", e.Data, a.Key, a.Val)
				}
			}
		}
	})

	t.Run("words", func(t *testing.T) {
		body := bodyText(doc)
		if n := strings.Count(body, record.Caution); n != 2 {
			t.Errorf("caution appears %d times, want 2 (near the figures and at the end)", n)
		}
		if !strings.Contains(body, testSentence) {
			t.Errorf("verdict sentence missing; want %q", testSentence)
		}
		// The verdict comes before the first table: decision first.
		if i, j := strings.Index(body, testSentence), strings.Index(body, "Sign-offs the policy requires"); i < 0 || j < 0 || i > j {
			t.Errorf("verdict at %d, sign-offs at %d: the verdict must come first", i, j)
		}
		// The markup in a check's detail is text, not an element.
		if !strings.Contains(body, testScriptDetail) {
			t.Errorf("check detail %q not shown as text", testScriptDetail)
		}
		for _, s := range []string{
			// Money defined once, at the top: currency, what a gain is, which weeks.
			"Amounts are in EUR; spend is per week unless said otherwise. A gain is profit: margin 65% × revenue − spend, over the 13 weeks from the week of 2026-01-05",
			"38,000 EUR", "494,000 over the 13 weeks", // money moved, per week and over the horizon
			"+90,000 EUR", "90% of draws -4,800 to +190,000", // expected gain and its interval
			"7.2%",                                                   // chance of a loss
			"-4,800 EUR", "a loss: 5% of draws lose more than 4,800", // the bad case, a loss here
			"1 of 2 required sign-offs given; still needed: cmo.",
			"SIGNED", "NOT YET",
			"0123456789abcdef", "finance_partner", "2026-01-02 09:30:00", // who signed, with which key, when
			"Evidence: 3 of 6 checks passed; 1 failed and 2 warned",
			"20260101", "sluice test-0.0.0", fakeHash("data"), fakeHash("draws"),
		} {
			if !strings.Contains(body, s) {
				t.Errorf("brief does not say %q", s)
			}
		}
	})

	t.Run("first page", func(t *testing.T) {
		// The decision, the moves and the risk come before anything else.
		dec := sectionByID(t, doc, "decision")
		for _, id := range []string{"moves-table"} {
			if len(elements(dec, func(e *html.Node) bool { v, _ := attr(e, "id"); return v == id })) != 1 {
				t.Errorf("#%s is not in the decision section", id)
			}
		}
		if n := len(elements(dec, func(e *html.Node) bool { c, _ := attr(e, "class"); return c == "figures" })); n != 1 {
			t.Errorf("%d risk figures in the decision section, want 1", n)
		}
		// Each row of the moves table names its channel and says what set
		// its approved spend.
		rows := byTag(byTag(sectionByID(t, doc, "decision"), atom.Tbody)[0], atom.Tr)
		if len(rows) != len(testMoves) {
			t.Fatalf("%d rows in the moves table, want %d", len(rows), len(testMoves))
		}
		for i, tr := range rows {
			cells := elements(tr, func(e *html.Node) bool { return e.DataAtom == atom.Td || e.DataAtom == atom.Th })
			if got := text(cells[0]); got != testMoves[i].name {
				t.Errorf("row %d is %q, want %q", i, got, testMoves[i].name)
			}
			if text(cells[len(cells)-1]) == "" {
				t.Errorf("row %s says nothing of what set its approved spend", testMoves[i].name)
			}
		}
	})

	t.Run("budget view", func(t *testing.T) {
		tab := tableByID(t, doc, "budget-table")
		var rows [][]string
		for _, tr := range byTag(byTag(tab, atom.Tbody)[0], atom.Tr) {
			var r []string
			for _, c := range elements(tr, func(e *html.Node) bool { return e.DataAtom == atom.Td || e.DataAtom == atom.Th }) {
				r = append(r, text(c))
			}
			rows = append(rows, r)
		}
		want := [][]string{
			{"-10%", "2,700,000", "207,692", "+60,000", "-20,000 to +140,000", "+0.42 (returns 1.42)"},
			{"-5%", "2,850,000", "219,231", "+80,000", "-9,000 to +170,000", "+0.31 (returns 1.31)"},
			{"0% (this decision's budget)", "3,000,000", "230,769", "+150,000", "-61,000 to +380,000", "+0.18 (returns 1.18)"},
			{"+5%", "3,150,000", "242,308", "+140,000", "-70,000 to +390,000", "not confirmed"},
			{"+10%", "—", "—", "no plan", "—", "the plan's constraints cannot all hold at this budget"},
		}
		if !slices.EqualFunc(rows, want, slices.Equal) {
			t.Errorf("budget rows\n got %q\nwant %q", rows, want)
		}
	})

	t.Run("risk table", func(t *testing.T) {
		// The downside at the 5th percentile is the 5th percentile row:
		// one number, shown once.
		var labels []string
		for _, th := range byTag(byTag(tableByID(t, doc, "risk-table"), atom.Tbody)[0], atom.Th) {
			labels = append(labels, text(th))
		}
		if slices.ContainsFunc(labels, func(l string) bool { return strings.HasPrefix(l, "Downside") }) ||
			!slices.Contains(labels, "Gain at the 5th percentile (the policy's downside)") {
			t.Errorf("risk rows %q: want the 5th percentile once, named as the policy's downside", labels)
		}
	})

	t.Run("model charts", func(t *testing.T) {
		body := bodyText(doc)
		// Base and channel shares over the 26 invented weeks, and the
		// residual RMS in closed form: the pattern (+5,000, -5,000, 0)
		// over 26 weeks has 18 non-zero residuals, sqrt(18/26)·5,000 =
		// 4,160.25, written to three significant digits.
		c := testContributions()
		var base, total float64
		for t := range c.Weeks {
			base += c.Base[t]
			total += c.Base[t] + c.Media[0][t] + c.Media[1][t]
		}
		share := strconv.FormatFloat(math.Round(base/total*1000)/10, 'f', -1, 64) + "%"
		for _, s := range []string{"the base is " + share + " of the fitted revenue", "Residual SD 4,160"} {
			if !strings.Contains(body, s) {
				t.Errorf("brief does not say %q", s)
			}
		}
	})
}

// TestBriefDeterministic: the same input gives the same bytes, so a brief
// can be regenerated and compared.
func TestBriefDeterministic(t *testing.T) {
	a, b := render(t, testInput()), render(t, testInput())
	if !bytes.Equal(a, b) {
		t.Error("two renders of the same input differ")
	}
}

// TestVerdictSentence checks the sentence of each verdict against the
// figures of the invented decision.
func TestVerdictSentence(t *testing.T) {
	tests := []struct {
		name  string
		edit  func(d *record.Decision)
		badge string
		want  string
	}{
		{"downsize", func(*record.Decision) {}, "DOWNSIZE", "Downsize: move 38,000 a week of the 61,000 proposed. Held back: search, social, tv, online video and radio move part of the way. The approved plan is also scaled down because the proposal as a whole has a 23% chance of losing money (the policy allows 10%)."},
		{"approve", func(d *record.Decision) {
			d.Verdict = gate.Approve
			d.Risk.Approved = d.Risk.Proposed
		}, "APPROVE", "Approve: move 61,000 a week as proposed, 793,000 over the 13 weeks."},
		{"refuse", func(d *record.Decision) {
			d.Verdict = gate.Refuse
			d.Reasons = []string{"check lift_agreement (lift) failed: the lift test found half the modelled effect; the policy refuses any move when a lift check failed"}
		}, "REFUSE", "Refuse: none of the 61,000 a week proposed is moved, because check lift_agreement (lift) failed: the lift test found half the modelled effect; the policy refuses any move when a lift check failed."},
		{"refuse, nothing proposed", func(d *record.Decision) {
			d.Verdict = gate.Refuse
			d.Risk.Proposed.MovedPerWeek = 0
			d.Reasons = []string{"the proposal moves no money; there is nothing to approve"}
		}, "REFUSE", "Refuse: the proposal moves no money; there is nothing to approve."},
		{"downsize, channels kept at current spend", func(d *record.Decision) {
			d.Reasons = nil
			d.Moves[0].Approved = d.Moves[0].Current
			d.Moves[2].Approved = d.Moves[2].Current
		}, "DOWNSIZE", "Downsize: move 38,000 a week of the 61,000 proposed. Held back: search and tv keep current spend; social, online video and radio move part of the way."},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			in := report.Input{Record: testRecord()}
			tt.edit(in.Record)
			doc := parseHTML(t, render(t, in))
			var got, badge string
			for _, s := range byTag(doc, atom.Span) {
				if c, _ := attr(s, "class"); c == "sentence" {
					got = text(s)
				}
				if c, _ := attr(s, "class"); c == "detail" {
					got += " " + text(s)
				}
			}
			for _, s := range byTag(doc, atom.Strong) {
				if c, _ := attr(s, "class"); c == "badge" {
					badge = text(s)
				}
			}
			if got != tt.want {
				t.Errorf("sentence\n got %q\nwant %q", got, tt.want)
			}
			// One vocabulary with the terminal, which prints the verdict
			// upper-cased (cmd/sluice printDecision: "verdict: DOWNSIZE").
			if badge != tt.badge || badge != strings.ToUpper(string(in.Record.Verdict)) {
				t.Errorf("badge %q, want %q", badge, tt.badge)
			}
		})
	}
}

// TestBriefWithoutOptionalParts: no curves, gains, holdout or signatures
// still gives a brief, with a chart for the moves only.
func TestBriefWithoutOptionalParts(t *testing.T) {
	doc := parseHTML(t, render(t, report.Input{Record: testRecord()}))
	if n := len(byName(doc, "svg")); n != 1 {
		t.Errorf("%d charts, want 1 (the moves)", n)
	}
	body := bodyText(doc)
	for _, s := range []string{"0 of 2 required sign-offs given; still needed: finance and cmo.", "No draws of the gain were given"} {
		if !strings.Contains(body, s) {
			t.Errorf("brief does not say %q", s)
		}
	}
	for _, h := range byTag(doc, atom.H2) {
		if text(h) == "Response curves" || text(h) == "Forecast of weeks the model did not see" {
			t.Errorf("section %q shown without data", text(h))
		}
	}
}

func TestRenderErrors(t *testing.T) {
	var buf bytes.Buffer
	if err := report.Render(&buf, report.Input{}); !errors.Is(err, report.ErrNoRecord) {
		t.Errorf("no record: err = %v, want ErrNoRecord", err)
	}
	in := testInput()
	in.Curves[2].P50[4] = nan()
	err := report.Render(&buf, in)
	if err == nil || !strings.Contains(err.Error(), "tv") {
		t.Errorf("NaN in a curve: err = %v, want an error naming the channel", err)
	}
	if buf.Len() != 0 {
		t.Errorf("Render wrote %d bytes before failing", buf.Len())
	}

	in = testInput()
	in.Curves[0].P90 = in.Curves[0].P90[:3]
	func() {
		defer func() {
			if r := recover(); r == nil || !strings.HasPrefix(r.(string), "report: ") {
				t.Errorf("mismatched curve lengths: recover() = %v, want a report: panic", r)
			}
		}()
		report.Render(&buf, in)
	}()
}

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "brief.html")
	if err := report.Write(path, testInput()); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, render(t, testInput())) {
		t.Error("Write and Render differ")
	}
	// A failed render leaves the file as it was, and no temporary file.
	in := testInput()
	in.Gains[0] = nan()
	if err := report.Write(path, in); err == nil {
		t.Fatal("Write with a NaN gain succeeded")
	}
	again, _ := os.ReadFile(path)
	if !bytes.Equal(again, got) {
		t.Error("a failed Write changed the file")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d files in the directory after a failed Write, want 1", len(ents))
	}
}

func nan() float64 { return math.NaN() }

// TestRefusedBrief: a refusal moves nothing, so there is no gain
// distribution to draw and no safe step to offer.
func TestRefusedBrief(t *testing.T) {
	in := testInput()
	d := in.Record
	d.Verdict = gate.Refuse
	d.Reasons = []string{"no step of the proposal meets the policy", "check holdout_mape (accuracy) warned: holdout error above target"}
	for k := range d.Moves {
		d.Moves[k].Approved = d.Moves[k].Current
		d.Moves[k].Reasons = []string{"refused: no step of the proposal meets the policy"}
		in.Curves[k].Approved = in.Curves[k].Current
	}
	d.Risk.Approved = gate.Risk{DownsideLevel: 0.05, CVaRLevel: 0.05}
	for i := range in.Gains {
		in.Gains[i] = 0
	}
	doc := parseHTML(t, render(t, in))
	if got, want := len(byName(doc, "svg")), len(in.Curves)+4; got != want {
		t.Errorf("%d charts, want %d (no gain distribution)", got, want)
	}
	body := bodyText(doc)
	for _, s := range []string{
		"Refuse: none of the 61,000 EUR a week proposed is moved, because no step of the proposal meets the policy.",
		"The approved plan moves no money, so its gain is zero under every draw",
		"(no money moves; every channel keeps its current spend)",
		"kept at current spend: the decision is refused", // beside each channel whose move was proposed
		"no gain, no loss: 95% of draws gain at least this",
	} {
		if !strings.Contains(body, s) {
			t.Errorf("brief does not say %q", s)
		}
	}
	if strings.Contains(body, "On its own") {
		t.Error("a refused brief offers a safe step")
	}
	// The sentence's reason is not repeated in a Why list, and the
	// warning is in the evidence table with its meaning, not there.
	for _, ul := range byTag(doc, atom.Ul) {
		if p := ul.Parent; p != nil && p.DataAtom == atom.Div {
			t.Errorf("a Why list %q repeats the sentence or the evidence", text(ul))
		}
	}
}

// TestBadCaseTile: a positive 5th-percentile gain reads as a gain, with
// its sign, never as a loss (the "DOWNSIDE 100,054").
func TestBadCaseTile(t *testing.T) {
	in := testInput()
	a := &in.Record.Risk.Approved
	a.Downside, a.P05, a.PLoss = 100054, 100054, 0
	doc := parseHTML(t, render(t, in))
	var tile string
	for _, div := range byTag(sectionByID(t, doc, "decision"), atom.Div) {
		if dt := byTag(div, atom.Dt); len(dt) == 1 && strings.HasPrefix(text(dt[0]), "Bad case") {
			tile = text(div)
		}
	}
	for _, want := range []string{"Bad case: 5th percentile", "+100,054 EUR", "a gain, not a loss: 95% of draws gain at least this"} {
		if !strings.Contains(tile, want) {
			t.Errorf("bad-case tile %q does not say %q", tile, want)
		}
	}
	if strings.Contains(strings.ToLower(tile), "downside") {
		t.Errorf("bad-case tile %q calls a gain a downside", tile)
	}
}
