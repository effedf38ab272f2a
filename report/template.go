package report

import (
	_ "embed"
	"html/template"
)

//go:embed brief.html.tmpl
var briefSource string

// briefTemplate escapes every value by its context (html/template): channel
// names, check details and reasons are user data. Only the charts, which
// this package draws, enter as template.HTML.
var briefTemplate = template.Must(template.New("brief").Parse(briefSource))
