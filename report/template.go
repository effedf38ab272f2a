package report

import (
	_ "embed"
	"html/template"
)

var (
	//go:embed brief.html.tmpl
	briefSource string
	//go:embed rehearsal.html.tmpl
	rehearsalSource string
	// styleSource is the style sheet both pages share.
	//go:embed style.html.tmpl
	styleSource string
)

// briefTemplate escapes every value by its context (html/template): channel
// names, check details and reasons are user data. Only the charts, which
// this package draws, enter as template.HTML.
var briefTemplate = page("brief", briefSource)

// rehearsalTemplate is the rehearsal page; policy names are user data.
var rehearsalTemplate = page("rehearsal", rehearsalSource)

func page(name, src string) *template.Template {
	return template.Must(template.Must(template.New(name).Parse(src)).Parse(styleSource))
}
