package main

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
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
