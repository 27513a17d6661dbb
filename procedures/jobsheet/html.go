package jobsheet

import (
	"html"
	"io"
	"strings"
)

// css is the sheet's whole style: readable on screen, black on white in
// print with each section on a new page; status never relies on colour
// (every status is a symbol and a word).
const css = `
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #000; background: #fff; margin: 2em auto; max-width: 60em; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.6em; border-bottom: 2px solid #000; padding-bottom: .2em; }
h2 { font-size: 1.3em; border-bottom: 1px solid #000; margin-top: 1.6em; }
h3 { font-size: 1.05em; margin-top: 1.2em; }
table { border-collapse: collapse; margin: .6em 0; font-size: .88em; }
th, td { border: 1px solid #000; padding: .2em .45em; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; white-space: nowrap; }
tr.strong td { font-weight: bold; border-width: 2px; }
.warn { border: 3px solid #000; padding: .5em .8em; margin: .8em 0; font-weight: bold; }
.warn::before { content: "⚠ "; }
figure { margin: 1em 0; }
figcaption { font-size: .85em; }
svg.chart { max-width: 100%; height: auto; font-family: "DejaVu Sans", Arial, sans-serif; }
code { font-family: "DejaVu Sans Mono", monospace; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  section { break-before: page; page-break-before: always; }
  section:first-of-type { break-before: auto; page-break-before: auto; }
  figure, table, .warn { break-inside: avoid; page-break-inside: avoid; }
  th { background: none; }
}
`

func esc(s string) string { return html.EscapeString(s) }

func (d *document) html(w io.Writer) error {
	var b strings.Builder
	b.WriteString("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
	style := css
	if d.CSS != "" {
		style = d.CSS
	}
	b.WriteString("<title>" + esc(d.Title) + "</title>\n<style>" + style + "</style>\n</head>\n<body>\n")
	b.WriteString("<h1>" + esc(d.Title) + "</h1>\n")
	for _, s := range d.Sections {
		b.WriteString("<section id=\"" + esc(s.ID) + "\">\n<h2>" + esc(s.Title) + "</h2>\n")
		for _, bl := range s.Blocks {
			switch bl.Kind {
			case bPara:
				b.WriteString("<p>" + esc(bl.Text) + "</p>\n")
			case bWarn:
				b.WriteString("<p class=\"warn\" role=\"alert\">" + esc(bl.Text) + "</p>\n")
			case bHeading:
				b.WriteString("<h3>" + esc(bl.Text) + "</h3>\n")
			case bList:
				b.WriteString("<ul>\n")
				for _, it := range bl.Items {
					b.WriteString("<li>" + esc(it) + "</li>\n")
				}
				b.WriteString("</ul>\n")
			case bTable:
				htmlTable(&b, bl.Table)
			case bSVG:
				b.WriteString("<figure>\n" + bl.SVG)
				if bl.Text != "" {
					b.WriteString("<figcaption>" + esc(bl.Text) + "</figcaption>\n")
				}
				b.WriteString("</figure>\n")
			}
		}
		b.WriteString("</section>\n")
	}
	b.WriteString("</body>\n</html>\n")
	_, err := io.WriteString(w, b.String())
	return err
}

func htmlTable(b *strings.Builder, t *table) {
	b.WriteString("<table>\n<thead><tr>")
	for _, h := range t.Head {
		b.WriteString("<th scope=\"col\">" + esc(h) + "</th>")
	}
	b.WriteString("</tr></thead>\n<tbody>\n")
	for i, row := range t.Rows {
		if i < len(t.Strong) && t.Strong[i] {
			b.WriteString("<tr class=\"strong\">")
		} else {
			b.WriteString("<tr>")
		}
		for j, c := range row {
			if j < len(t.Numeric) && t.Numeric[j] {
				b.WriteString("<td class=\"num\">" + esc(c) + "</td>")
			} else {
				b.WriteString("<td>" + esc(c) + "</td>")
			}
		}
		b.WriteString("</tr>\n")
	}
	b.WriteString("</tbody>\n</table>\n")
}
