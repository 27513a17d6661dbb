package tui

import (
	"strings"
	"unicode"

	tea "github.com/charmbracelet/bubbletea"
)

// lineInput is a one-line text field for readings, predictions, notes and
// skip reasons: runes (µ and Ω arrive as KeyRunes), backspace, delete,
// left/right, home/end, ctrl+u (clear) and ctrl+w (delete a word).
//
// bubbles/textinput would do, but it pulls in a clipboard module that is
// not in this module's go.sum; a reading field needs none of its paste
// support, so this small field stands in with the same Value/SetValue/
// Reset/Update/View shape.
type lineInput struct {
	Prompt      string
	Placeholder string
	CharLimit   int
	Cursor      string // drawn at the cursor position (the terminal cursor is hidden)
	value       []rune
	pos         int
	width       int
}

func newLineInput(cursor string) lineInput {
	return lineInput{CharLimit: 120, Cursor: cursor}
}

func (in *lineInput) Value() string { return string(in.value) }

func (in *lineInput) SetValue(s string) {
	in.value = []rune(s)
	in.pos = len(in.value)
}

func (in *lineInput) Reset() { in.value, in.pos = nil, 0 }

func (in *lineInput) SetWidth(w int) { in.width = max(0, w) }

func (in lineInput) Update(msg tea.Msg) (lineInput, tea.Cmd) {
	k, ok := msg.(tea.KeyMsg)
	if !ok {
		return in, nil
	}
	switch k.Type {
	case tea.KeyRunes, tea.KeySpace:
		rs := k.Runes
		if k.Type == tea.KeySpace {
			rs = []rune{' '}
		}
		for _, r := range rs {
			if !unicode.IsPrint(r) || (in.CharLimit > 0 && len(in.value) >= in.CharLimit) {
				continue
			}
			in.value = append(in.value[:in.pos], append([]rune{r}, in.value[in.pos:]...)...)
			in.pos++
		}
	case tea.KeyBackspace:
		if in.pos > 0 {
			in.value = append(in.value[:in.pos-1], in.value[in.pos:]...)
			in.pos--
		}
	case tea.KeyDelete:
		if in.pos < len(in.value) {
			in.value = append(in.value[:in.pos], in.value[in.pos+1:]...)
		}
	case tea.KeyLeft:
		in.pos = max(0, in.pos-1)
	case tea.KeyRight:
		in.pos = min(len(in.value), in.pos+1)
	case tea.KeyHome, tea.KeyCtrlA:
		in.pos = 0
	case tea.KeyEnd:
		in.pos = len(in.value)
	case tea.KeyCtrlU:
		in.value, in.pos = in.value[in.pos:], 0
	case tea.KeyCtrlW:
		i := in.pos
		for i > 0 && in.value[i-1] == ' ' {
			i--
		}
		for i > 0 && in.value[i-1] != ' ' {
			i--
		}
		in.value = append(in.value[:i], in.value[in.pos:]...)
		in.pos = i
	}
	return in, nil
}

func (in lineInput) View() string {
	var b strings.Builder
	b.WriteString(in.Prompt)
	if len(in.value) == 0 {
		b.WriteString(in.Cursor)
		if in.Placeholder != "" {
			b.WriteString(" " + in.Placeholder)
		}
		return b.String()
	}
	b.WriteString(string(in.value[:in.pos]))
	b.WriteString(in.Cursor)
	b.WriteString(string(in.value[in.pos:]))
	return b.String()
}
