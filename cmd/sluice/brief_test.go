package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"sluice/record"
)

// chromium is Debian's browser package; CI installs it.
const chromium = "/usr/bin/chromium"

// pdfPage matches a page object of a PDF: "/Type /Page", not "/Pages"
// (ISO 32000-1:2008, 7.7.3.3, "Page Objects").
var pdfPage = regexp.MustCompile(`/Type\s*/Page[^s]`)

// TestDemoBriefPrints renders the brief of the example company (the demo,
// examples/) and prints it with headless Chromium: at most six pages, the
// issue's budget for a finance partner's brief.
func TestDemoBriefPrints(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo and a browser; skipped under -short")
	}
	if _, err := os.Stat(chromium); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("%s is missing; CI must install Debian's chromium package", chromium)
		}
		t.Skipf("%s not installed", chromium)
	}
	dir := t.TempDir()
	var out, errb bytes.Buffer
	if code := run([]string{"sluice", "demo", "--out", filepath.Join(dir, "d"), "--quiet"}, &out, &errb); code != 0 {
		t.Fatalf("demo exited %d: %s", code, errb.String())
	}
	page := filepath.Join(dir, "d", "report.html")
	pdf := filepath.Join(dir, "brief.pdf")
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, chromium, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
		"--user-data-dir="+filepath.Join(dir, "profile"), "--host-resolver-rules=MAP * ~NOTFOUND",
		"--print-to-pdf="+pdf, "--no-pdf-header-footer", "file://"+page)
	cmd.WaitDelay = 10 * time.Second
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, b)
	}
	b, err := os.ReadFile(pdf)
	if err != nil || !bytes.HasPrefix(b, []byte("%PDF-")) {
		t.Fatalf("no PDF: %v", err)
	}
	n := len(pdfPage.FindAll(b, -1))
	t.Logf("the example brief prints on %d pages", n)
	if n < 1 || n > 6 {
		t.Errorf("the example brief prints on %d pages, want 1 to 6", n)
	}
	html, _ := os.ReadFile(page)
	for _, s := range []string{"Amounts are in EUR", "What a different budget would buy", "Contributions over time", "Actual against fitted"} {
		if !strings.Contains(string(html), s) {
			t.Errorf("the example brief lacks %q", s)
		}
	}
}

// TestDemoBudgetView checks the example brief's budget view against
// arithmetic: the demo plan keeps the total (budget_change: 0,
// budget_mode equal), so the total at a change x is (1+x) × 13 weeks ×
// the sum of current weekly spend; and at x = 0 the allocator's plan is
// the decision's proposal, so its expected gain is the record's.
func TestDemoBudgetView(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo; skipped under -short")
	}
	dir := t.TempDir()
	var out, errb bytes.Buffer
	if code := run([]string{"sluice", "demo", "--out", filepath.Join(dir, "d"), "--quiet"}, &out, &errb); code != 0 {
		t.Fatalf("demo exited %d: %s", code, errb.String())
	}
	var bd briefData
	raw, err := os.ReadFile(filepath.Join(dir, "d", "brief.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &bd); err != nil {
		t.Fatal(err)
	}
	body, err := os.ReadFile(filepath.Join(dir, "d", "decision.json"))
	if err != nil {
		t.Fatal(err)
	}
	rec, err := record.ParseDecision(body, "decision.json")
	if err != nil {
		t.Fatal(err)
	}
	var current float64
	for _, m := range rec.Moves {
		current += m.Current
	}
	if len(bd.Budget) != 5 {
		t.Fatalf("%d budget points, want 5", len(bd.Budget))
	}
	for i, b := range bd.Budget {
		if b.Error != "" {
			t.Errorf("budget %+.0f%%: %s", 100*b.Change, b.Error)
			continue
		}
		if want := (1 + budgetSteps[i]) * float64(rec.Horizon) * current; math.Abs(b.Budget-want) > 1e-6*want {
			t.Errorf("budget %+.0f%%: total %v, want %v", 100*b.Change, b.Budget, want)
		}
		if !(b.P05 <= b.ExpectedGain && b.ExpectedGain <= b.P95) {
			t.Errorf("budget %+.0f%%: expected gain %v outside its band %v to %v", 100*b.Change, b.ExpectedGain, b.P05, b.P95)
		}
	}
	// At today's budget the allocator gives the decision's own proposal,
	// judged on the same half of the draws as the gate judged it.
	if g, want := bd.Budget[2].ExpectedGain, rec.Risk.Proposed.ExpectedGain; math.Abs(g-want) > 1e-6*math.Abs(want) {
		t.Errorf("at today's budget the expected gain is %v, the proposal's as the gate judged it %v", g, want)
	}
	if bd.Money == nil || bd.Money.Currency != "EUR" || bd.Money.Margin != 0.65 {
		t.Errorf("money %+v, want EUR at margin 0.65 (examples/plan.yaml)", bd.Money)
	}
}
