package jobsheet

import (
	"io"
	"strings"
)

// mdEscape escapes text for a GitHub-flavoured Markdown table cell or
// paragraph: Markdown punctuation with a backslash, angle brackets as
// entities (so no text is taken for raw HTML), newlines as spaces.
func mdEscape(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '\\', '`', '*', '_', '[', ']', '|', '#', '~':
			b.WriteByte('\\')
			b.WriteRune(r)
		case '<':
			b.WriteString("&lt;")
		case '>':
			b.WriteString("&gt;")
		case '&':
			b.WriteString("&amp;")
		case '\n', '\r':
			b.WriteByte(' ')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

func (d *document) markdown(w io.Writer) error {
	var b strings.Builder
	b.WriteString("# " + mdEscape(d.Title) + "\n")
	for _, s := range d.Sections {
		b.WriteString("\n## " + mdEscape(s.Title) + "\n")
		for _, bl := range s.Blocks {
			b.WriteByte('\n')
			switch bl.Kind {
			case bPara:
				b.WriteString(mdEscape(bl.Text) + "\n")
			case bWarn:
				b.WriteString("> **⚠ " + mdEscape(bl.Text) + "**\n")
			case bHeading:
				b.WriteString("### " + mdEscape(bl.Text) + "\n")
			case bList:
				for _, it := range bl.Items {
					b.WriteString("- " + mdEscape(it) + "\n")
				}
			case bTable:
				mdTable(&b, bl.Table)
			case bSVG:
				if bl.Text != "" {
					b.WriteString("*Plot (in the HTML job sheet):* " + mdEscape(bl.Text) + "\n")
				} else {
					b.WriteString("*Plot in the HTML job sheet.*\n")
				}
			}
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func mdTable(b *strings.Builder, t *table) {
	b.WriteString("|")
	for _, h := range t.Head {
		b.WriteString(" " + mdEscape(h) + " |")
	}
	b.WriteString("\n|")
	for i := range t.Head {
		if i < len(t.Numeric) && t.Numeric[i] {
			b.WriteString("---:|")
		} else {
			b.WriteString("---|")
		}
	}
	b.WriteString("\n")
	for i, row := range t.Rows {
		strong := i < len(t.Strong) && t.Strong[i]
		b.WriteString("|")
		for _, c := range row {
			c = mdEscape(c)
			if strong && strings.TrimSpace(c) != "" {
				c = "**" + c + "**"
			}
			b.WriteString(" " + c + " |")
		}
		b.WriteString("\n")
	}
}
