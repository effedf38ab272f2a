package report_test

import (
	"bytes"
	"strings"
	"testing"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// The brief is read back with golang.org/x/net/html, which implements the
// WHATWG HTML parsing algorithm (the one browsers use), so a structure
// these helpers see is the structure a browser builds.

func parseHTML(t testing.TB, b []byte) *html.Node {
	t.Helper()
	doc, err := html.Parse(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("the brief does not parse: %v", err)
	}
	return doc
}

// elements returns every element under n, in document order, that match.
func elements(n *html.Node, match func(*html.Node) bool) []*html.Node {
	var out []*html.Node
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode && match(n) {
			out = append(out, n)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(n)
	return out
}

func byTag(n *html.Node, tags ...atom.Atom) []*html.Node {
	return elements(n, func(e *html.Node) bool {
		for _, a := range tags {
			if e.DataAtom == a {
				return true
			}
		}
		return false
	})
}

// byName matches elements by name, for foreign (SVG) elements, which have
// no atom of their own in every case.
func byName(n *html.Node, name string) []*html.Node {
	return elements(n, func(e *html.Node) bool { return e.Data == name })
}

func attr(n *html.Node, key string) (string, bool) {
	for _, a := range n.Attr {
		if a.Key == key {
			return a.Val, true
		}
	}
	return "", false
}

// text is the text content of n, with runs of white space as one space.
func text(n *html.Node) string {
	var b strings.Builder
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.TextNode {
			b.WriteString(n.Data)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(n)
	return strings.Join(strings.Fields(b.String()), " ")
}

// bodyText is the text a reader sees: the body's text outside the charts.
func bodyText(doc *html.Node) string {
	var b strings.Builder
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode && (n.Data == "svg" || n.DataAtom == atom.Style || n.DataAtom == atom.Head) {
			return
		}
		if n.Type == html.TextNode {
			b.WriteString(n.Data)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(doc)
	return strings.Join(strings.Fields(b.String()), " ")
}

// tagCounts counts the elements of each name: the shape of the document.
func tagCounts(doc *html.Node) map[string]int {
	m := map[string]int{}
	for _, e := range elements(doc, func(*html.Node) bool { return true }) {
		m[e.Data]++
	}
	return m
}

// sectionByID returns the element with the id, failing the test if there
// is not exactly one.
func sectionByID(t testing.TB, doc *html.Node, id string) *html.Node {
	t.Helper()
	found := elements(doc, func(e *html.Node) bool { v, _ := attr(e, "id"); return v == id })
	if len(found) != 1 {
		t.Fatalf("%d elements with id %q, want 1", len(found), id)
	}
	return found[0]
}

func tableByID(t testing.TB, doc *html.Node, id string) *html.Node { return sectionByID(t, doc, id) }
