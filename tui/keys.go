package tui

import "github.com/charmbracelet/bubbles/key"

// KeyMap is every key the program answers to; the help overlay and the
// foot line are drawn from it, and the reading field takes its editing
// keys from it, so help and behaviour cannot drift apart.
//
// Printable keys belong to the reading field (readings use letters: 4k7,
// 2m2A, OL, 300V!; notes and reasons are words), so no command is a
// printable key: what the program does is either a typed command
// (procedures.Commands: "s REASON", "list", "power" ...) or one of the
// function keys, Page Up/Down, Tab, Enter and Esc below.
type KeyMap struct {
	NextView, PrevView    key.Binding
	Enter                 key.Binding
	NextStep, PrevStep    key.Binding
	Steps                 key.Binding
	Skip, Note, Detail    key.Binding
	GoSuggested           key.Binding
	Up, Down, Left, Right key.Binding
	RetrySave             key.Binding
	Help                  key.Binding
	Cancel                key.Binding
	Quit                  key.Binding
	Yes, No               key.Binding

	// Editing keys of the reading field.
	LineStart, LineEnd key.Binding
	Clear, DeleteWord  key.Binding
	Paste              key.Binding
}

// DefaultKeyMap returns the key bindings, with Unicode arrows in the help.
// The function keys are numbered by how often a bench needs them: F1 the
// help, F2 to F6 the step's own actions, F9 saving again.
func DefaultKeyMap() KeyMap {
	return KeyMap{
		NextView:    key.NewBinding(key.WithKeys("tab"), key.WithHelp("Tab", "next view")),
		PrevView:    key.NewBinding(key.WithKeys("shift+tab"), key.WithHelp("Shift+Tab", "previous view")),
		Enter:       key.NewBinding(key.WithKeys("enter"), key.WithHelp("Enter", "record / confirm")),
		NextStep:    key.NewBinding(key.WithKeys("pgdown"), key.WithHelp("PgDn", "next open step")),
		PrevStep:    key.NewBinding(key.WithKeys("pgup"), key.WithHelp("PgUp", "previous step")),
		Steps:       key.NewBinding(key.WithKeys("f5"), key.WithHelp("F5", "list of steps")),
		Skip:        key.NewBinding(key.WithKeys("f2"), key.WithHelp("F2", "skip step (asks why)")),
		Note:        key.NewBinding(key.WithKeys("f3"), key.WithHelp("F3", "add a note")),
		Detail:      key.NewBinding(key.WithKeys("f4"), key.WithHelp("F4", "full text, all cautions")),
		GoSuggested: key.NewBinding(key.WithKeys("f6"), key.WithHelp("F6", "go to suggested")),
		Up:          key.NewBinding(key.WithKeys("up"), key.WithHelp("↑", "up / scroll")),
		Down:        key.NewBinding(key.WithKeys("down"), key.WithHelp("↓", "down / scroll")),
		Left:        key.NewBinding(key.WithKeys("left"), key.WithHelp("←", "previous valve")),
		Right:       key.NewBinding(key.WithKeys("right"), key.WithHelp("→", "next valve")),
		RetrySave:   key.NewBinding(key.WithKeys("f9"), key.WithHelp("F9", "save again")),
		Help:        key.NewBinding(key.WithKeys("f1"), key.WithHelp("F1", "this help")),
		Cancel:      key.NewBinding(key.WithKeys("esc"), key.WithHelp("Esc", "cancel / close")),
		Quit:        key.NewBinding(key.WithKeys("ctrl+c"), key.WithHelp("Ctrl+C", "quit (asks first)")),
		Yes:         key.NewBinding(key.WithKeys("y", "Y"), key.WithHelp("y", "yes")),
		No:          key.NewBinding(key.WithKeys("n", "N", "esc"), key.WithHelp("n", "no")),

		LineStart:  key.NewBinding(key.WithKeys("home"), key.WithHelp("Home", "start of line")),
		LineEnd:    key.NewBinding(key.WithKeys("end"), key.WithHelp("End", "end of line")),
		Clear:      key.NewBinding(key.WithKeys("ctrl+u"), key.WithHelp("Ctrl+U", "clear to the start")),
		DeleteWord: key.NewBinding(key.WithKeys("ctrl+w", "alt+backspace"), key.WithHelp("Ctrl+W", "delete a word")),
		Paste:      key.NewBinding(key.WithKeys("ctrl+v"), key.WithHelp("Ctrl+V", "paste")),
	}
}

// asciiHelp words the arrow keys without arrows, for ASCII terminals.
func (k *KeyMap) asciiHelp() {
	k.Up.SetHelp("up", k.Up.Help().Desc)
	k.Down.SetHelp("down", k.Down.Help().Desc)
	k.Left.SetHelp("left", k.Left.Help().Desc)
	k.Right.SetHelp("right", k.Right.Help().Desc)
}

// keyGroup is one titled column of the help overlay.
type keyGroup struct {
	Title string
	Keys  []key.Binding
}

// Groups is the full key list by purpose, for the help overlay.
func (k KeyMap) Groups() []keyGroup {
	return []keyGroup{
		{"Readings and steps", []key.Binding{k.Enter, k.Skip, k.Note, k.Detail, k.PrevStep, k.NextStep}},
		{"Views and lists", []key.Binding{k.NextView, k.PrevView, k.Steps, pair(k.Left, k.Right, "other valve"), pair(k.Up, k.Down, "scroll / choose"), k.GoSuggested}},
		{"Editing the reading", []key.Binding{k.LineStart, k.LineEnd, k.Clear, k.DeleteWord, k.Paste}},
		{"Session", []key.Binding{k.Help, k.Cancel, k.RetrySave, k.Quit}},
	}
}

// pair is two keys as one line of help ("←/→ other valve").
func pair(a, b key.Binding, desc string) key.Binding {
	return key.NewBinding(key.WithKeys(append(a.Keys(), b.Keys()...)...), key.WithHelp(a.Help().Key+"/"+b.Help().Key, desc))
}

// ShortHelp is the foot line's keys on the step view (see Model.footer
// for the other views).
func (k KeyMap) ShortHelp() []key.Binding {
	return []key.Binding{k.Help, k.Skip, k.Note, k.Detail, k.Steps, k.NextView, k.Quit}
}

// FullHelp is the key list in the groups of the help overlay.
func (k KeyMap) FullHelp() [][]key.Binding {
	var out [][]key.Binding
	for _, g := range k.Groups() {
		out = append(out, g.Keys)
	}
	return out
}
