package tui

import (
	"github.com/charmbracelet/bubbles/cursor"
	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/bubbles/textinput"
	"github.com/muesli/termenv"
)

// inputCharLimit is the longest line the field takes: a reading is a few
// characters, but a complaint in the customer's words, a note or a skip
// reason may be a paragraph, and nothing typed may be cut; the field
// scrolls sideways.
const inputCharLimit = 2000

// newInput returns the one-line field for readings, predictions, notes
// and skip reasons: a bubbles text input, focused, with a steady cursor
// (a blinking one would need a timer command for nothing) and with its
// editing keys taken from the key map, so that the keys the program uses
// for commands (the function keys, Page Up/Down, Tab, the arrows up and
// down) never edit the text. Letters, digits, µ and Ω
// arrive as runes and are typed as they are.
//
// When the renderer draws no colour (NO_COLOR, not a terminal, the test
// renderer) reverse video is dropped too, so the cursor is drawn as the
// glyph g.Cursor in front of the character under it. Placeholders start
// with a space, which the cursor covers.
func newInput(st *Styles, g Glyphs, k KeyMap) textinput.Model {
	in := textinput.New()
	in.CharLimit = inputCharLimit
	in.Prompt = "> "
	in.PromptStyle = st.Prompt
	in.TextStyle = st.Input
	in.PlaceholderStyle = st.Dim
	in.Cursor.Style = st.R.NewStyle()
	if st.R.ColorProfile() == termenv.Ascii {
		mark := g.Cursor
		in.Cursor.Style = in.Cursor.Style.Transform(func(under string) string {
			return mark + under
		})
	}
	in.Cursor.SetMode(cursor.CursorStatic)
	in.KeyMap = textinput.KeyMap{
		CharacterForward:        key.NewBinding(key.WithKeys("right", "ctrl+f")),
		CharacterBackward:       key.NewBinding(key.WithKeys("left", "ctrl+b")),
		WordForward:             key.NewBinding(key.WithKeys("alt+right", "ctrl+right", "alt+f")),
		WordBackward:            key.NewBinding(key.WithKeys("alt+left", "ctrl+left", "alt+b")),
		DeleteWordBackward:      k.DeleteWord,
		DeleteWordForward:       key.NewBinding(key.WithKeys("alt+delete", "alt+d")),
		DeleteBeforeCursor:      k.Clear,
		DeleteCharacterBackward: key.NewBinding(key.WithKeys("backspace", "ctrl+h")),
		DeleteCharacterForward:  key.NewBinding(key.WithKeys("delete", "ctrl+d")),
		LineStart:               k.LineStart,
		LineEnd:                 k.LineEnd,
		Paste:                   k.Paste,
		// DeleteAfterCursor (ctrl+k) and the suggestion keys (tab, up,
		// down, ctrl+n, ctrl+p) are commands here: left unbound.
	}
	in.Focus()
	return in
}
