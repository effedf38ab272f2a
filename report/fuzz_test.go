package report_test

import (
	"maps"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"sluice/report"
)

// fuzzInput is a one-channel brief whose user-written strings are the
// fuzzer's: the channel's name, a check's detail, a reason and the title.
func fuzzInput(channel, detail, reason, title string) report.Input {
	d := testRecord()
	d.Moves = d.Moves[3:4]
	d.Moves[0].Channel = channel
	d.Moves[0].Reasons = []string{reason}
	d.Channels = []string{channel}
	d.Checks = d.Checks[:3]
	d.Checks[1].Detail = detail
	d.Checks[2].Scope = channel
	// The first reason is the one the verdict sentence quotes (and the Why
	// list then leaves out); the second stays in the list.
	d.Reasons = []string{"the proposal as a whole " + reason, reason + " (a warning)"}
	d.SignoffsRequired[0].Explanation = reason
	m := testMoves[3]
	return report.Input{Record: d, Signed: []string{channel}, Title: title,
		Curves: []report.CurveBand{testCurve(channel, m.current, m.proposed, m.approved)}}
}

// shape counts the elements of the page outside its charts, and the
// charts: the structure a user's string must never change.
func shape(doc *html.Node) map[string]int {
	m := map[string]int{}
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode {
			m[n.Data]++
			if n.Data == "svg" {
				return
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(doc)
	return m
}

// FuzzRenderEscapes: whatever the user's strings hold, the page keeps the
// structure it has with plain ones, runs no script and handles no event
// (html/template escaping; vgsvg escapes chart text).
func FuzzRenderEscapes(f *testing.F) {
	f.Add("search", "plain detail", "a reason", "Test Co.")
	f.Add(`</title><script>alert(1)</script>`, `<img src=x onerror=alert(1)>`, `"><svg onload=alert(1)>`, `</style><link rel=stylesheet href=//x>`)
	var base map[string]int
	f.Fuzz(func(t *testing.T, channel, detail, reason, title string) {
		if len(channel)+len(detail)+len(reason)+len(title) > 2000 {
			t.Skip("long strings only slow the fuzzer down")
		}
		if base == nil {
			base = shape(parseHTML(t, render(t, fuzzInput("a", "b", "c", "d"))))
		}
		doc := parseHTML(t, render(t, fuzzInput(channel, detail, reason, title)))
		if got := shape(doc); !maps.Equal(got, base) {
			t.Fatalf("strings changed the page's structure:\n got %v\nwant %v", got, base)
		}
		for _, e := range elements(doc, func(*html.Node) bool { return true }) {
			switch e.Data {
			case "script", "foreignObject", "foreignobject", "iframe", "link", "img", "image", "a", "use":
				t.Fatalf("element <%s> in the page", e.Data)
			}
			for _, a := range e.Attr {
				if strings.HasPrefix(a.Key, "on") || a.Key == "href" || a.Key == "src" || a.Key == "xlink:href" {
					t.Fatalf("<%s> has attribute %s", e.Data, a.Key)
				}
			}
		}
	})
}
