package tui

import "github.com/charmbracelet/bubbles/key"

// KeyMap is every key the program answers to; the help overlay and the
// short help line are drawn from it, and the reading field takes its
// editing keys from it, so help and behaviour cannot drift apart.
//
// Printable keys belong to the reading field (readings use letters: 4k7,
// 2m2A, OL, 300V!), so no command is a single letter: commands are Ctrl
// keys (shown as ^K for Ctrl+K), Tab, Enter, Esc and F1.
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
func DefaultKeyMap() KeyMap {
	return KeyMap{
		NextView:    key.NewBinding(key.WithKeys("tab"), key.WithHelp("tab", "next view")),
		PrevView:    key.NewBinding(key.WithKeys("shift+tab"), key.WithHelp("shift+tab", "previous view")),
		Enter:       key.NewBinding(key.WithKeys("enter"), key.WithHelp("enter", "record / confirm")),
		NextStep:    key.NewBinding(key.WithKeys("ctrl+n"), key.WithHelp("^N", "next open step")),
		PrevStep:    key.NewBinding(key.WithKeys("ctrl+p"), key.WithHelp("^P", "previous step")),
		Steps:       key.NewBinding(key.WithKeys("ctrl+l"), key.WithHelp("^L", "list of steps")),
		Skip:        key.NewBinding(key.WithKeys("ctrl+k"), key.WithHelp("^K", "skip step (asks why)")),
		Note:        key.NewBinding(key.WithKeys("ctrl+o"), key.WithHelp("^O", "add a note")),
		Detail:      key.NewBinding(key.WithKeys("ctrl+e"), key.WithHelp("^E", "full text")),
		GoSuggested: key.NewBinding(key.WithKeys("ctrl+g"), key.WithHelp("^G", "go to suggested")),
		Up:          key.NewBinding(key.WithKeys("up"), key.WithHelp("↑", "up / scroll")),
		Down:        key.NewBinding(key.WithKeys("down"), key.WithHelp("↓", "down / scroll")),
		Left:        key.NewBinding(key.WithKeys("left"), key.WithHelp("←", "previous valve")),
		Right:       key.NewBinding(key.WithKeys("right"), key.WithHelp("→", "next valve")),
		RetrySave:   key.NewBinding(key.WithKeys("ctrl+r"), key.WithHelp("^R", "retry saving")),
		Help:        key.NewBinding(key.WithKeys("f1", "?"), key.WithHelp("F1", "help")),
		Cancel:      key.NewBinding(key.WithKeys("esc"), key.WithHelp("esc", "cancel / close")),
		Quit:        key.NewBinding(key.WithKeys("ctrl+c", "ctrl+q"), key.WithHelp("^C", "quit (asks first)")),
		Yes:         key.NewBinding(key.WithKeys("y", "Y"), key.WithHelp("y", "yes")),
		No:          key.NewBinding(key.WithKeys("n", "N", "esc"), key.WithHelp("n", "no")),

		LineStart:  key.NewBinding(key.WithKeys("home", "ctrl+a"), key.WithHelp("home ^A", "start of line")),
		LineEnd:    key.NewBinding(key.WithKeys("end"), key.WithHelp("end", "end of line")),
		Clear:      key.NewBinding(key.WithKeys("ctrl+u"), key.WithHelp("^U", "delete to the start")),
		DeleteWord: key.NewBinding(key.WithKeys("ctrl+w", "alt+backspace"), key.WithHelp("^W", "delete a word")),
		Paste:      key.NewBinding(key.WithKeys("ctrl+v"), key.WithHelp("^V", "paste")),
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
		{"Readings and steps", []key.Binding{k.Enter, k.Skip, k.Note, k.Detail, k.NextStep, k.PrevStep}},
		{"Views and lists", []key.Binding{k.NextView, k.PrevView, k.Steps, pair(k.Left, k.Right, "other valve"), pair(k.Up, k.Down, "scroll / choose"), k.GoSuggested}},
		{"Editing the reading", []key.Binding{k.LineStart, k.LineEnd, k.Clear, k.DeleteWord, k.Paste}},
		{"Session", []key.Binding{k.Help, k.Cancel, k.RetrySave, k.Quit}},
	}
}

// pair is two keys as one line of help ("←/→ other valve").
func pair(a, b key.Binding, desc string) key.Binding {
	return key.NewBinding(key.WithKeys(append(a.Keys(), b.Keys()...)...), key.WithHelp(a.Help().Key+"/"+b.Help().Key, desc))
}

// ShortHelp is the one-line help at the foot of the screen (the step
// view's; see Model.shortHelp for the other views).
func (k KeyMap) ShortHelp() []key.Binding {
	return []key.Binding{k.Enter, k.Skip, k.Detail, k.Steps, k.NextView, k.Help, k.Quit}
}

// FullHelp is the key list in the groups of the help overlay.
func (k KeyMap) FullHelp() [][]key.Binding {
	var out [][]key.Binding
	for _, g := range k.Groups() {
		out = append(out, g.Keys)
	}
	return out
}
