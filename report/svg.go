package report

import (
	"bytes"
	"fmt"
	"html"
	"html/template"
	"regexp"
	"strconv"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
)

// fontStack replaces the family gonum names in its SVG text. Liberation
// Sans, Arimo, Arial and Helvetica share metrics, so the labels keep the
// widths gonum measured; sans-serif is the last resort.
const fontStack = `font-family:'Liberation Sans',Arimo,Arial,Helvetica,sans-serif;`

var (
	svgOpen  = regexp.MustCompile(`<svg[^>]*>`)
	viewBox  = regexp.MustCompile(`viewBox="([0-9. ]+)"`)
	textElem = regexp.MustCompile(`<text ([^>]*)>([^<]*)</text>`)
	fontSize = regexp.MustCompile(`font-size:([0-9.]+)px`)
)

// fitText gives every text element the width gonum measured it at
// (textLength), so that a reader's font, wider or narrower than the face
// gonum measured with, is squeezed or stretched to fit: labels never run
// into an axis or past the edge of the chart.
func fitText(body []byte) []byte {
	return textElem.ReplaceAllFunc(body, func(el []byte) []byte {
		m := textElem.FindSubmatch(el)
		fs := fontSize.FindSubmatch(m[1])
		txt := html.UnescapeString(string(m[2]))
		if fs == nil || txt == "" {
			return el
		}
		size, err := strconv.ParseFloat(string(fs[1]), 64)
		if err != nil {
			return el
		}
		face := font.DefaultCache.Lookup(sans, vg.Points(size))
		w := face.Width(txt).Points()
		var b bytes.Buffer
		fmt.Fprintf(&b, `<text %s textLength="%.5g" lengthAdjust="spacingAndGlyphs">%s</text>`, m[1], w, m[2])
		return b.Bytes()
	})
}

// inlineSVG turns a gonum SVG document into an element for an HTML page:
// the XML prolog and comment go, the root element keeps only its viewBox
// (the page sizes it; HTML puts an inline <svg> in the SVG namespace by
// itself, so no xmlns, and no URL, is needed), gains role="img", an
// aria-label and a <title>, and the text names a generic font family
// instead of the face gonum measured with. No font is embedded.
func inlineSVG(doc []byte, id, label string) (template.HTML, error) {
	loc := svgOpen.FindIndex(doc)
	if loc == nil {
		return "", fmt.Errorf("report: chart %s: no <svg> element", id)
	}
	vb := viewBox.FindSubmatch(doc[loc[0]:loc[1]])
	if vb == nil {
		return "", fmt.Errorf("report: chart %s: <svg> has no viewBox", id)
	}
	body := doc[loc[1]:]
	body = fitText(body)
	body = bytes.ReplaceAll(body, []byte("font-family:Liberation Sans;"), []byte(fontStack))
	body = bytes.TrimSpace(body)

	esc := html.EscapeString(label)
	var b bytes.Buffer
	b.Grow(len(body) + 256)
	fmt.Fprintf(&b, `<svg class="chart" id="%s" viewBox="%s" role="img" aria-label="%s">`, id, vb[1], esc)
	fmt.Fprintf(&b, `<title>%s</title>`, esc)
	b.WriteByte('\n')
	b.Write(body)
	// The chart is our own drawing; its text was escaped by vgsvg
	// (html.EscapeString) and its label above.
	return template.HTML(b.String()), nil
}
