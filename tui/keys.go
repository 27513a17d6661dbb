package tui

import "github.com/charmbracelet/bubbles/key"

// KeyMap is every key the program answers to; the help overlay and the
// short help line are drawn from it, so help and behaviour cannot drift
// apart. Printable keys are left to the reading input (readings use
// letters: 4k7, 2m2A, OL, 300V!), so commands on the step view are
// control keys, Tab, Enter, Esc and F1.
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
}

// DefaultKeyMap returns the key bindings.
func DefaultKeyMap() KeyMap {
	return KeyMap{
		NextView:    key.NewBinding(key.WithKeys("tab"), key.WithHelp("tab", "next view")),
		PrevView:    key.NewBinding(key.WithKeys("shift+tab"), key.WithHelp("shift+tab", "previous view")),
		Enter:       key.NewBinding(key.WithKeys("enter"), key.WithHelp("enter", "record / confirm")),
		NextStep:    key.NewBinding(key.WithKeys("ctrl+n"), key.WithHelp("ctrl+n", "next open step")),
		PrevStep:    key.NewBinding(key.WithKeys("ctrl+p"), key.WithHelp("ctrl+p", "previous step")),
		Steps:       key.NewBinding(key.WithKeys("ctrl+l"), key.WithHelp("ctrl+l", "list of steps")),
		Skip:        key.NewBinding(key.WithKeys("ctrl+k"), key.WithHelp("ctrl+k", "skip step (why?)")),
		Note:        key.NewBinding(key.WithKeys("ctrl+o"), key.WithHelp("ctrl+o", "add a note")),
		Detail:      key.NewBinding(key.WithKeys("ctrl+e"), key.WithHelp("ctrl+e", "full step text")),
		GoSuggested: key.NewBinding(key.WithKeys("ctrl+g"), key.WithHelp("ctrl+g", "go to suggested")),
		Up:          key.NewBinding(key.WithKeys("up"), key.WithHelp("↑", "up / previous")),
		Down:        key.NewBinding(key.WithKeys("down"), key.WithHelp("↓", "down / next")),
		Left:        key.NewBinding(key.WithKeys("left"), key.WithHelp("←", "previous valve")),
		Right:       key.NewBinding(key.WithKeys("right"), key.WithHelp("→", "next valve")),
		RetrySave:   key.NewBinding(key.WithKeys("ctrl+r"), key.WithHelp("ctrl+r", "retry saving")),
		Help:        key.NewBinding(key.WithKeys("f1", "?"), key.WithHelp("F1/?", "help")),
		Cancel:      key.NewBinding(key.WithKeys("esc"), key.WithHelp("esc", "cancel / close")),
		Quit:        key.NewBinding(key.WithKeys("ctrl+c", "ctrl+q"), key.WithHelp("ctrl+c", "quit (asks first)")),
		Yes:         key.NewBinding(key.WithKeys("y", "Y"), key.WithHelp("y", "yes")),
		No:          key.NewBinding(key.WithKeys("n", "N", "esc"), key.WithHelp("n", "no")),
	}
}

// ShortHelp is the one-line help at the foot of the screen.
func (k KeyMap) ShortHelp() []key.Binding {
	return []key.Binding{k.Enter, k.NextView, k.NextStep, k.Skip, k.Help, k.Quit}
}

// FullHelp is the help overlay, in columns.
func (k KeyMap) FullHelp() [][]key.Binding {
	return [][]key.Binding{
		{k.Enter, k.NextStep, k.PrevStep, k.Steps, k.Skip, k.Note, k.Detail},
		{k.NextView, k.PrevView, k.Up, k.Down, k.Left, k.Right, k.GoSuggested},
		{k.RetrySave, k.Help, k.Cancel, k.Quit},
	}
}
