package tui

import (
	"slices"

	"github.com/charmbracelet/bubbles/help"
	"github.com/charmbracelet/bubbles/key"
	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/lipgloss"

	"pinwalk/expect/amp"
	"pinwalk/expect/point"
	"pinwalk/procedures"
	"pinwalk/procedures/infer"
	"pinwalk/procedures/jobsheet"
)

// Config is what the program presents.
type Config struct {
	// Walk is the running procedure (runner over its session, bench model,
	// and the measuring loop of fault-finding and practice). Walk.R is
	// required.
	Walk *procedures.Walk
	// Model is the amplifier for the socket and overview views; nil takes
	// Walk.B.M.
	Model *amp.Model
	// Path is the session file; "" takes Walk.R.Path. The program saves in
	// commands (never inside Update), so it clears Walk.R.Path to keep the
	// runner from saving synchronously.
	Path string
	// ASCII draws with ASCII glyphs and borders only.
	ASCII bool
	// Renderer decides colour (nil: lipgloss's default renderer on stdout,
	// which honours NO_COLOR).
	Renderer *lipgloss.Renderer
	// Rank ranks the suspects on a copy of the readings, for modes without
	// a measuring loop (bring-up, training); nil builds an inference
	// engine from the design on first use. It runs in a command.
	Rank func(readings []procedures.Reading) (*infer.Ranking, error)
	// Start says how the session began, for the first screen and the
	// commands to resume it (zero: a new session of an unnamed design).
	Start Start
}

// Start is how the session began: new or resumed from its file, and the
// design as the command line named it ("demo", "myamp.yaml").
type Start struct {
	Resumed bool
	// Readings in the session file when it was resumed.
	Readings int
	// Design is the DESIGN argument of pinwalk walk ("" takes "DESIGN").
	Design string
	// Mode is the --mode of the session ("" or bringup: none in the
	// commands shown).
	Mode procedures.Mode
	// Fresh is a session file that does not exist yet, for the command
	// that starts a fresh session instead of this one ("" takes NEWFILE).
	Fresh string
}

// View indexes.
const (
	viewStep = iota
	viewSockets
	viewSuspects
	viewAmp
	nViews
)

var viewNames = [nViews]string{"Step", "Sockets", "Suspects", "Amp"}

// overlay is a box drawn over the body.
type overlay int

const (
	overNone overlay = iota
	overHelp
	overQuit
	overSteps
	overDetail
)

// Model is the root model. Create it with New.
type Model struct {
	e    *env
	cfg  Config
	walk *procedures.Walk
	// ctl is the session controller: every change to the session goes
	// through it, in a command.
	ctl  *procedures.Controller
	view int
	w, h int

	step stepView
	sock socketView
	sus  suspectsView
	ov   overviewView
	help help.Model

	over       overlay
	listCursor int
	scroll     int

	// Saving happens in commands, one at a time.
	path     string
	saving   bool
	dirty    bool
	saveErr  error
	saves    int
	quitting bool

	// busy: the measuring loop is working in a command; keys wait in
	// queue and the screen shows the frame from before.
	busy   bool
	queue  []tea.KeyMsg
	frozen string
	info   string

	rankSeq  int
	wantRank bool
	rankFn   func([]procedures.Reading) (*infer.Ranking, error)
}

// New builds the root model for a walk.
func New(cfg Config) Model {
	r := cfg.Walk.R
	path := cfg.Path
	if path == "" {
		path = r.Path
	}
	r.Path = ""
	cfg.Path = path
	cfg.Start = cfg.Start.fill(r.Sess)
	rend := cfg.Renderer
	if rend == nil {
		rend = lipgloss.DefaultRenderer()
	}
	st := DefaultStyles(rend)
	g := UnicodeGlyphs()
	if cfg.ASCII {
		g = ASCIIGlyphs()
		st.asciiBorders()
	}
	keys := DefaultKeyMap()
	if cfg.ASCII {
		keys.asciiHelp()
	}
	mdl := cfg.Model
	if mdl == nil && cfg.Walk.B != nil {
		mdl = cfg.Walk.B.M
	}
	e := &env{run: r, st: st, g: g, keys: keys, labels: map[point.Key]string{}, lab: labeller(cfg.Walk), bands: map[bandKey]bandEntry{}, cfg: &cfg}
	e.relabel()
	h := help.New()
	h.Styles.ShortKey = st.Label
	h.Styles.FullKey = st.Label
	h.Styles.ShortDesc = st.Dim
	h.Styles.FullDesc = st.Dim
	h.Styles.ShortSeparator = st.Dim
	h.Styles.FullSeparator = st.Dim
	h.Styles.Ellipsis = st.Dim
	h.ShortSeparator = g.Sep
	h.Ellipsis = g.Ellipsis
	m := Model{e: e, cfg: cfg, walk: cfg.Walk, ctl: procedures.NewController(cfg.Walk), path: path, help: h,
		step: newStepView(e), sock: newSocketView(e, mdl), sus: newSuspectsView(e), ov: newOverviewView(e, mdl)}
	m.step.start = m.startLines(m.w)
	m.rankFn = cfg.Rank
	if m.rankFn == nil && cfg.Walk.B != nil {
		m.rankFn = m.ctl.Ranker()
	}
	m.setSize(80, 24)
	return m
}

// labeller is the job sheet's labeller for the walk's design.
func labeller(w *procedures.Walk) *jobsheet.Labeller {
	if w.B != nil {
		return jobsheet.NewLabeller(w.B.D)
	}
	return jobsheet.NewLabeller(nil)
}

// relabel maps every measure's point key to its label.
func (e *env) relabel() {
	for _, st := range e.run.Proc.Steps {
		for _, ms := range st.Measures {
			if _, ok := e.labels[ms.Point]; !ok {
				e.labels[ms.Point] = ms.Label
			}
		}
	}
}

// Init starts the work the first screen needs: the nominal operating
// point, the current step's bands, and the measuring loop's first move.
func (m Model) Init() tea.Cmd {
	cmds := []tea.Cmd{m.step.bandCmds()}
	if m.ov.m != nil && m.walk.B != nil {
		cmds = append(cmds, nominalOP(m.walk.B))
	}
	if m.walk.Loop != nil {
		cmds = append(cmds, func() tea.Msg { return changedMsg{} })
	}
	return tea.Batch(cmds...)
}

// actedMsg reports an action the controller carried out.
type actedMsg struct {
	A     procedures.Action
	State procedures.State
	Err   error
	Rank  *infer.Ranking
}

// act runs an action on the controller in a command; until it reports,
// keys queue and the screen stays as it was.
func (m *Model) act(a procedures.Action) tea.Cmd {
	ctl := m.ctl
	want := m.wantRank && !m.practice()
	what := "working " + m.e.g.Ellipsis
	if a.Kind == procedures.ActRefresh {
		what = "working out the next measurement " + m.e.g.Ellipsis
	}
	m.frozen = m.body()
	m.busy = true
	m.info = what
	return func() tea.Msg {
		st, err := ctl.Do(a)
		out := actedMsg{A: a, State: st, Err: err}
		if want {
			out.Rank = st.Rank
		}
		return out
	}
}

// savedMsg reports a save finished.
type savedMsg struct{ Err error }

// snapshot copies the session for saving in a command while Update goes on
// changing the original.
func snapshot(r *procedures.Runner) *procedures.Session {
	c := *r.Sess
	c.Symptoms = slices.Clone(c.Symptoms)
	c.Readings = slices.Clone(c.Readings)
	c.Skips = slices.Clone(c.Skips)
	c.Passes = slices.Clone(c.Passes)
	c.Notes = slices.Clone(c.Notes)
	c.Attempts = slices.Clone(c.Attempts)
	c.Guesses = slices.Clone(c.Guesses)
	c.Added = slices.Clone(c.Added)
	if c.Practice != nil {
		p := *c.Practice
		c.Practice = &p
	}
	if c.Outcome != nil {
		o := *c.Outcome
		o.Replaced = slices.Clone(o.Replaced)
		c.Outcome = &o
	}
	if st := r.Current(); st != nil {
		c.Cursor = st.ID
	}
	return &c
}

// save starts a save, or marks one due when a save is already running.
func (m *Model) save() tea.Cmd {
	if m.path == "" {
		return nil
	}
	if m.saving {
		m.dirty = true
		return nil
	}
	m.saving, m.dirty = true, false
	snap, path := snapshot(m.e.run), m.path
	return func() tea.Msg { return savedMsg{Err: snap.Save(path)} }
}

// rank starts a ranking for the suspects view (modes without a loop).
func (m *Model) rank() tea.Cmd {
	if m.rankFn == nil || m.practice() {
		return nil
	}
	m.rankSeq++
	seq, fn := m.rankSeq, m.rankFn
	rs := slices.Clone(m.e.run.Sess.Readings)
	m.sus.pending = true
	return func() tea.Msg {
		rk, err := fn(rs)
		return rankMsg{Seq: seq, Rank: rk, Err: err}
	}
}

func (m *Model) practice() bool { return m.e.run.Sess.Mode == procedures.Practise }

// setSize lays the views out for a terminal of w×h cells.
func (m *Model) setSize(w, h int) {
	m.w, m.h = max(20, w), max(8, h)
	bh := m.bodyHeight()
	m.step.SetSize(m.w, bh)
	m.sock.SetSize(m.w, bh)
	m.sus.SetSize(m.w, bh)
	m.ov.SetSize(m.w, bh)
	m.help.Width = m.w
	if m.step.start != nil {
		m.step.start = m.startLines(m.w)
	}
}

// bodyHeight: the screen less header, tabs, status line and help line.
func (m *Model) bodyHeight() int { return max(1, m.h-4) }

// Update handles a message.
func (m Model) Update(msg tea.Msg) (tea.Model, tea.Cmd) {
	switch msg := msg.(type) {
	case tea.WindowSizeMsg:
		m.setSize(msg.Width, msg.Height)
		return m, nil
	case savedMsg:
		m.saving = false
		m.saveErr = msg.Err
		m.e.run.SaveErr = msg.Err
		if msg.Err == nil {
			m.saves++
		}
		if m.dirty && msg.Err == nil {
			return m, m.save()
		}
		if m.quitting {
			if msg.Err == nil {
				return m, tea.Quit
			}
			m.quitting = false
			m.over = overQuit
		}
		return m, nil
	case bandMsg:
		m.e.bands[msg.Key] = bandEntry{Band: msg.Band, Has: msg.Has}
		return m, nil
	case opMsg:
		m.ov, _ = m.ov.Update(msg)
		return m, m.ov.bandCmds()
	case rankMsg:
		if msg.Seq == m.rankSeq {
			m.sus, _ = m.sus.Update(msg)
		}
		return m, nil
	case changedMsg:
		m.e.relabel()
		cmds := []tea.Cmd{m.save(), m.step.bandCmds()}
		if m.walk.Loop != nil && !m.busy {
			cmds = append(cmds, m.act(procedures.Action{Kind: procedures.ActRefresh}))
		} else if m.wantRank {
			m.sus.stale = true
			cmds = append(cmds, m.rank())
		}
		return m, tea.Batch(cmds...)
	case actionMsg:
		if m.busy {
			return m, func() tea.Msg { return msg }
		}
		return m, m.act(msg.A)
	case overlayMsg:
		m.over = msg.o
		if msg.o == overSteps {
			m.listCursor = max(0, m.e.run.CurrentIndex())
		}
		return m, nil
	case actedMsg:
		m.busy, m.frozen, m.info = false, "", ""
		prev := ""
		if st := m.e.run.Current(); st != nil {
			prev = st.ID
		}
		m.walk = m.ctl.Walk()
		m.e.run = m.ctl.Runner()
		m.e.run.Path = ""
		m.e.relabel()
		if msg.State.Step == nil || msg.State.Step.ID != prev {
			m.step.moved()
			m.view = viewStep
		}
		if msg.A.Kind != procedures.ActRefresh || msg.Err != nil || len(msg.State.Said) > 0 {
			m.step.acted(msg.A, msg.State, msg.Err)
		}
		if msg.Rank != nil {
			m.sus, _ = m.sus.Update(rankMsg{Rank: msg.Rank})
		} else if m.wantRank && m.walk.Loop == nil {
			m.sus.stale = true
		}
		cmds := []tea.Cmd{m.save(), m.step.bandCmds()}
		if m.wantRank && m.walk.Loop == nil {
			cmds = append(cmds, m.rank())
		}
		q := m.queue
		m.queue = nil
		var mod tea.Model = m
		for _, k := range q {
			var c tea.Cmd
			mod, c = mod.Update(k)
			cmds = append(cmds, c)
		}
		return mod, tea.Batch(cmds...)
	case gotoPointMsg:
		return m.gotoPoint(msg)
	case tea.KeyMsg:
		return m.key(msg)
	}
	// Anything else belongs to the input field (its paste results).
	var cmd tea.Cmd
	m.step.in, cmd = m.step.in.Update(msg)
	return m, cmd
}

// gotoPoint moves to the first open step measuring a point.
func (m Model) gotoPoint(msg gotoPointMsg) (tea.Model, tea.Cmd) {
	r := m.e.run
	for _, st := range r.Proc.Steps {
		for _, ms := range st.Measures {
			if ms.Point != msg.Key || r.Done(st.ID) {
				continue
			}
			m.view = viewStep
			return m, m.act(procedures.Action{Kind: procedures.ActGoto, Step: st.ID})
		}
	}
	if m.walk.Loop != nil {
		return m, m.act(procedures.Action{Kind: procedures.ActChoose, Text: msg.Key.String()})
	}
	m.info = "no open step measures " + msg.Label
	return m, nil
}

// key handles a key press.
func (m Model) key(k tea.KeyMsg) (tea.Model, tea.Cmd) {
	keys := m.e.keys
	if m.busy {
		if key.Matches(k, keys.Quit) {
			m.over = overQuit
			return m, nil
		}
		m.queue = append(m.queue, k)
		return m, nil
	}
	m.info = ""
	if m.over == overNone && m.view == viewStep && (k.Type == tea.KeyRunes || k.Type == tea.KeySpace) {
		// Typed or pasted text goes to the field whole, whatever its
		// letters: no key binding takes a printable key here.
		var cmd tea.Cmd
		m.step.in, cmd = m.step.in.Update(k)
		return m, cmd
	}
	switch m.over {
	case overQuit:
		switch {
		case key.Matches(k, keys.Yes):
			m.quitting = true
			if !m.saving && !m.dirty && m.saveErr == nil {
				return m, tea.Quit
			}
			if m.saveErr != nil || m.dirty {
				// One more try; quits when it succeeds.
				if !m.saving {
					return m, m.save()
				}
			}
			return m, nil
		case key.Matches(k, keys.RetrySave):
			return m, m.save()
		case key.Matches(k, keys.No), key.Matches(k, keys.Quit):
			m.over = overNone
		}
		return m, nil
	case overHelp:
		if key.Matches(k, keys.Help) || key.Matches(k, keys.Cancel) || key.Matches(k, keys.Enter) {
			m.over = overNone
		} else if key.Matches(k, keys.Quit) {
			m.over = overQuit
		}
		return m, nil
	case overDetail:
		switch {
		case key.Matches(k, keys.Down):
			m.scroll++
		case key.Matches(k, keys.Up):
			m.scroll = max(0, m.scroll-1)
		case key.Matches(k, keys.Quit):
			m.over = overQuit
		default:
			m.over = overNone
		}
		return m, nil
	case overSteps:
		r := m.e.run
		switch {
		case key.Matches(k, keys.Down):
			m.listCursor = min(len(r.Proc.Steps)-1, m.listCursor+1)
		case key.Matches(k, keys.Up):
			m.listCursor = max(0, m.listCursor-1)
		case key.Matches(k, keys.Enter):
			m.over = overNone
			m.view = viewStep
			return m, m.act(procedures.Action{Kind: procedures.ActGoto, Step: r.Proc.Steps[m.listCursor].ID})
		case key.Matches(k, keys.Quit):
			m.over = overQuit
		case key.Matches(k, keys.Cancel), key.Matches(k, keys.Steps):
			m.over = overNone
		}
		return m, nil
	}
	switch {
	case key.Matches(k, keys.Quit):
		m.over = overQuit
		return m, nil
	case key.Matches(k, keys.Help) && (m.view != viewStep || m.step.mode == modeReading):
		m.over = overHelp
		return m, nil
	case key.Matches(k, keys.Steps):
		m.over = overSteps
		m.listCursor = max(0, m.e.run.CurrentIndex())
		return m, nil
	case key.Matches(k, keys.Detail):
		m.over = overDetail
		m.scroll = 0
		return m, nil
	case key.Matches(k, keys.RetrySave):
		if m.saveErr != nil || m.dirty {
			return m, m.save()
		}
		m.info = "the session is saved"
		return m, nil
	case key.Matches(k, keys.NextView), key.Matches(k, keys.PrevView):
		d := 1
		if key.Matches(k, keys.PrevView) {
			d = nViews - 1
		}
		m.view = (m.view + d) % nViews
		return m, m.opened()
	case key.Matches(k, keys.GoSuggested):
		if m.sus.rank != nil && m.sus.rank.Next != nil {
			p := m.sus.rank.Next
			k, _ := point.Parse(p.Key)
			return m.gotoPoint(gotoPointMsg{Key: k, Label: p.Label})
		}
		m.info = "no suggested measurement yet: open the Suspects view (tab) to rank"
		return m, nil
	}
	var cmd tea.Cmd
	switch m.view {
	case viewStep:
		m.step, cmd = m.step.Update(k)
	case viewSockets:
		m.sock, cmd = m.sock.Update(k)
	case viewSuspects:
		m.sus, cmd = m.sus.Update(k)
	case viewAmp:
		m.ov, cmd = m.ov.Update(k)
	}
	return m, cmd
}

// opened starts what a newly opened view needs.
func (m *Model) opened() tea.Cmd {
	switch m.view {
	case viewStep:
		return m.step.bandCmds()
	case viewSockets:
		return m.sock.bandCmds()
	case viewAmp:
		return m.ov.bandCmds()
	case viewSuspects:
		if m.practice() {
			return nil
		}
		if !m.wantRank || m.sus.stale || m.sus.rank == nil {
			m.wantRank = true
			if m.walk.Loop != nil {
				return m.act(procedures.Action{Kind: procedures.ActRefresh})
			}
			return m.rank()
		}
	}
	return nil
}
