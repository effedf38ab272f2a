package report_test

import (
	"bytes"
	"context"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"sluice/report"
)

// chromium is Debian's browser package; CI installs it (.ci/run).
const chromium = "/usr/bin/chromium"

func needChromium(t *testing.T) {
	t.Helper()
	if testing.Short() {
		t.Skip("browser test skipped under -short")
	}
	if _, err := os.Stat(chromium); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("%s is missing; CI must install Debian's chromium package", chromium)
		}
		t.Skipf("%s not installed (apt-get install -y --no-install-recommends chromium)", chromium)
	}
}

// runChromium runs headless Chromium on page with extra arguments and
// returns its standard output and its log (standard error, at verbosity 1,
// where Chromium logs every URL request and every file it loads).
func runChromium(t *testing.T, page string, extra ...string) (stdout []byte, log string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	args := []string{
		"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir=" + t.TempDir(),
		// The browser's own background requests (time, updates, accounts)
		// resolve nowhere, so nothing leaves the machine.
		"--host-resolver-rules=MAP * ~NOTFOUND",
		"--enable-logging=stderr", "--v=1",
	}
	args = append(append(args, extra...), "file://"+page)
	cmd := exec.CommandContext(ctx, chromium, args...)
	cmd.WaitDelay = 10 * time.Second
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, tail(errb.String(), 40))
	}
	return out.Bytes(), errb.String()
}

func tail(s string, n int) string {
	lines := strings.Split(s, "\n")
	return strings.Join(lines[max(0, len(lines)-n):], "\n")
}

var (
	// Chromium's log lines (net/base/network_delegate.cc and
	// content/browser/loader/file_url_loader_factory.cc at --v=1).
	urlRequest = regexp.MustCompile(`NotifyBeforeURLRequest: (\S+)`)
	fileLoad   = regexp.MustCompile(`FileURLLoader::Start: (\S+)`)
	// Hosts the browser itself calls on start (clock, updates, sign-in);
	// none is the page's.
	browserOwn = regexp.MustCompile(`^https?://([a-z0-9-]+\.)*(google\.com|googleapis\.com|gvt1\.com|gstatic\.com)/`)
)

// pageLoads lists what a page made the browser fetch, besides the page:
// URL requests that are not the browser's own, files other than the page,
// and lines that report a failed load of the page or a network error
// naming it.
func pageLoads(log, page string) []string {
	var out []string
	self := "file://" + page
	for _, line := range strings.Split(log, "\n") {
		if m := urlRequest.FindStringSubmatch(line); m != nil && !browserOwn.MatchString(m[1]) {
			out = append(out, "request "+m[1])
		}
		if m := fileLoad.FindStringSubmatch(line); m != nil && m[1] != self {
			out = append(out, "file "+m[1])
		}
		if strings.Contains(line, filepath.Base(page)) && (strings.Contains(line, "Failed to load") || strings.Contains(line, "net::ERR")) {
			out = append(out, "error "+line)
		}
	}
	return out
}

// TestBriefInBrowser opens the brief in a real browser: it must draw
// (a screenshot that is not blank, with the charts' blue in it), build every
// chart into its DOM, and fetch nothing.
func TestBriefInBrowser(t *testing.T) {
	needChromium(t)
	dir := t.TempDir()
	page := filepath.Join(dir, "brief.html")
	in := testInput()
	if err := report.Write(page, in); err != nil {
		t.Fatal(err)
	}

	shot := filepath.Join(dir, "brief.png")
	_, log := runChromium(t, page, "--screenshot="+shot, "--window-size=1280,4000", "--hide-scrollbars")
	if loads := pageLoads(log, page); len(loads) > 0 {
		t.Errorf("the brief made the browser fetch or fail:\n%s", strings.Join(loads, "\n"))
	}
	if !fileLoad.MatchString(log) {
		t.Errorf("the browser's log shows no file load; the fetch check above saw nothing:\n%s", tail(log, 20))
	}
	b, err := os.ReadFile(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v", err)
	}
	keepForPeople(t, "brief.png", b)
	keepForPeople(t, "brief.html", mustRead(t, page))
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("screenshot is not a PNG: %v", err)
	}
	st := pixels(img)
	t.Logf("screenshot %v: %.1f%% not white, %d colours, %d chart-blue pixels", img.Bounds().Size(), 100*st.inked, st.colours, st.blue)
	if img.Bounds().Dx() != 1280 || img.Bounds().Dy() != 4000 {
		t.Errorf("screenshot is %v, want 1280x4000", img.Bounds().Size())
	}
	// A blank or unstyled page has almost no ink and a handful of
	// colours; the brief's first 4000 pixels hold text, tables and charts.
	if st.inked < 0.04 || st.colours < 200 {
		t.Errorf("screenshot looks blank: %.1f%% not white, %d colours", 100*st.inked, st.colours)
	}
	if st.blue < 500 {
		t.Errorf("screenshot has %d pixels of the charts' blue; the charts did not draw", st.blue)
	}

	dom, _ := runChromium(t, page, "--dump-dom")
	doc := parseHTML(t, dom)
	svgs := byName(doc, "svg")
	if want := len(in.Curves) + 5; len(svgs) != want {
		t.Errorf("rendered DOM has %d charts, want %d", len(svgs), want)
	}
	for _, s := range svgs {
		if r, _ := attr(s, "role"); r != "img" || len(byName(s, "path")) == 0 {
			label, _ := attr(s, "aria-label")
			t.Errorf("rendered chart %q: role %q, %d paths", label, r, len(byName(s, "path")))
		}
	}
	if !strings.Contains(bodyText(doc), testSentence) {
		t.Error("rendered DOM lacks the verdict sentence")
	}
}

// TestFetchDetector is the negative control of the browser test: a page
// that loads a missing image and a remote style sheet must be caught.
func TestFetchDetector(t *testing.T) {
	needChromium(t)
	page := filepath.Join(t.TempDir(), "fetching.html")
	src := `<!DOCTYPE html><html><head><title>t</title><link rel="stylesheet" href="https://example.invalid/a.css"></head>` +
		`<body><img src="missing.png" alt=""></body></html>`
	if err := os.WriteFile(page, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	_, log := runChromium(t, page, "--dump-dom")
	loads := strings.Join(pageLoads(log, page), "\n")
	for _, want := range []string{"request https://example.invalid/a.css", "file file://" + filepath.Dir(page) + "/missing.png"} {
		if !strings.Contains(loads, want) {
			t.Errorf("detector missed %q; it saw:\n%s", want, loads)
		}
	}
}

type pixelStats struct {
	inked   float64 // share of pixels that are not white
	colours int     // distinct colours
	blue    int     // pixels within 24 of Okabe–Ito blue #0072B2 per channel
}

func pixels(img image.Image) pixelStats {
	seen := map[uint32]bool{}
	var st pixelStats
	b := img.Bounds()
	ink := 0
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			r, g, bl = r>>8, g>>8, bl>>8
			seen[r<<16|g<<8|bl] = true
			if r < 250 || g < 250 || bl < 250 {
				ink++
			}
			if near(r, 0x00) && near(g, 0x72) && near(bl, 0xB2) {
				st.blue++
			}
		}
	}
	st.inked = float64(ink) / float64(b.Dx()*b.Dy())
	st.colours = len(seen)
	return st
}

func near(v, want uint32) bool { return v+24 >= want && v <= want+24 }

// keepForPeople copies a browser test's output to testdata/out (ignored by
// git), so a person can look at it after a local run.
func keepForPeople(t *testing.T, name string, b []byte) {
	dir := filepath.Join("testdata", "out")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Logf("not kept: %v", err)
		return
	}
	if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
		t.Logf("not kept: %v", err)
	}
}

func mustRead(t *testing.T, path string) []byte {
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// firstScreenCSS paints the three parts page 1 must show (the verdict,
// the risk figures, the last row of the moves table) in colours the brief
// never uses. Only backgrounds change, so the layout is the brief's own.
const firstScreenCSS = `<style>
.verdict { background: #ff00ff !important; }
.figures div { background: #00ffff !important; }
#moves-table tfoot th, #moves-table tfoot td { background: #ffff00 !important; }
</style></head>`

// TestBriefFirstScreen: in a 1280×800 window (a common laptop viewport;
// common practice, no source) the decision, the risk figures and the whole
// moves table are on screen without scrolling.
func TestBriefFirstScreen(t *testing.T) {
	needChromium(t)
	dir := t.TempDir()
	page := filepath.Join(dir, "marked.html")
	raw := render(t, testInput())
	if err := os.WriteFile(page, bytes.Replace(raw, []byte("</head>"), []byte(firstScreenCSS), 1), 0o644); err != nil {
		t.Fatal(err)
	}
	shot := filepath.Join(dir, "first.png")
	runChromium(t, page, "--screenshot="+shot, "--window-size=1280,800", "--hide-scrollbars")
	b := mustRead(t, shot)
	keepForPeople(t, "brief-first-screen.png", b)
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("screenshot is not a PNG: %v", err)
	}
	for _, c := range []struct {
		what    string
		r, g, b uint32
	}{{"the verdict", 0xff, 0x00, 0xff}, {"the risk figures", 0x00, 0xff, 0xff}, {"the end of the moves table", 0xff, 0xff, 0x00}} {
		n := countColour(img, c.r, c.g, c.b)
		// A table row 1,000 px wide and 20 px high is 20,000 pixels; 2,000
		// leaves room for text over the colour and rules the layout out
		// only when the part is (nearly) off screen.
		if n < 2000 {
			t.Errorf("%s: %d pixels of its marker colour in the first screen, want at least 2,000", c.what, n)
		}
	}
	// The negative control: a window too short for the moves table loses
	// its last row.
	short := filepath.Join(dir, "short.png")
	runChromium(t, page, "--screenshot="+short, "--window-size=1280,400", "--hide-scrollbars")
	simg, err := png.Decode(bytes.NewReader(mustRead(t, short)))
	if err != nil {
		t.Fatal(err)
	}
	if n := countColour(simg, 0xff, 0xff, 0x00); n != 0 {
		t.Errorf("a 400 px window shows %d pixels of the moves table's last row; the marker check cannot tell", n)
	}
}

func countColour(img image.Image, r0, g0, b0 uint32) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			if r>>8 == r0 && g>>8 == g0 && bl>>8 == b0 {
				n++
			}
		}
	}
	return n
}

// pdfPage matches a page object of a PDF: "/Type /Page" and not "/Pages"
// (ISO 32000-1:2008, 7.7.3.3, "Page Objects").
var pdfPage = regexp.MustCompile(`/Type\s*/Page[^s]`)

// printedPages prints page to PDF with headless Chromium and counts its
// pages.
func printedPages(t *testing.T, page string) int {
	t.Helper()
	pdf := filepath.Join(t.TempDir(), "brief.pdf")
	runChromium(t, page, "--print-to-pdf="+pdf, "--no-pdf-header-footer")
	b := mustRead(t, pdf)
	if !bytes.HasPrefix(b, []byte("%PDF-")) {
		t.Fatalf("%s is not a PDF", pdf)
	}
	return len(pdfPage.FindAll(b, -1))
}

// TestBriefPrints: the invented six-channel decision prints on at most six
// pages (the budget); the counter itself is checked on a page
// made to print on exactly three.
func TestBriefPrints(t *testing.T) {
	needChromium(t)
	dir := t.TempDir()
	page := filepath.Join(dir, "brief.html")
	if err := report.Write(page, testInput()); err != nil {
		t.Fatal(err)
	}
	if n := printedPages(t, page); n < 1 || n > 6 {
		t.Errorf("the brief prints on %d pages, want 1 to 6", n)
	} else {
		t.Logf("the brief prints on %d pages", n)
	}
	three := filepath.Join(dir, "three.html")
	src := `<!DOCTYPE html><html><head><title>t</title><style>p { break-after: page; }</style></head><body><p>1</p><p>2</p><div>3</div></body></html>`
	if err := os.WriteFile(three, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	if n := printedPages(t, three); n != 3 {
		t.Errorf("page counter: %d pages for a page made to print on 3", n)
	}
}
