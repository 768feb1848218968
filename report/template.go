package report

import (
	_ "embed"
	"html/template"
	"strings"
)

//go:embed page.html
var pageSource string

//go:embed style.css
var styleSource string

// pageTemplate is the page with its style sheet inlined as trusted template
// text; every value from the data goes through html/template's contextual
// escaping.
var pageTemplate = template.Must(template.New("page").Parse(strings.Replace(pageSource, "/*STYLE*/", styleSource, 1)))
