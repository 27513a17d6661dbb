// Package tui is the full-screen terminal interface of a bench session:
// the step with its cautions, band gauge and reading input; the valve
// sockets seen from below; the ranked suspects; the amp at a glance. It
// presents the procedures engine and holds no measurement logic of its
// own. Keys only (no mouse), so it works over SSH; every status is a glyph
// or a word as well as a colour, so it works under NO_COLOR.
package tui

import (
	"context"
	"errors"
	"os"
	"strings"

	tea "github.com/charmbracelet/bubbletea"
)

// Run shows the walk full-screen until the user quits (or ctx is done).
// The session is saved after every change, in the background; Run
// returns the last save error, if the user quit with one.
func Run(ctx context.Context, cfg Config, opts ...tea.ProgramOption) error {
	if !cfg.ASCII {
		cfg.ASCII = wantASCII()
	}
	if p := os.Getenv("PINWALK_TUI_LOG"); p != "" {
		f, err := tea.LogToFile(p, "pinwalk")
		if err == nil {
			defer f.Close()
		}
	}
	opts = append([]tea.ProgramOption{tea.WithAltScreen(), tea.WithContext(ctx)}, opts...)
	p := tea.NewProgram(New(cfg), opts...)
	final, err := p.Run()
	if errors.Is(err, tea.ErrProgramKilled) && ctx.Err() != nil {
		err = nil
	}
	if err != nil {
		return err
	}
	if m, ok := final.(Model); ok && m.saveErr != nil {
		return m.saveErr
	}
	return nil
}

// wantASCII: PINWALK_ASCII=1, or a locale that is not UTF-8, or the Linux
// console.
func wantASCII() bool {
	if v := os.Getenv("PINWALK_ASCII"); v != "" {
		return v != "0"
	}
	if os.Getenv("TERM") == "linux" {
		return true
	}
	for _, k := range []string{"LC_ALL", "LC_CTYPE", "LANG"} {
		if v := os.Getenv(k); v != "" {
			v = strings.ToUpper(v)
			return !strings.Contains(v, "UTF-8") && !strings.Contains(v, "UTF8")
		}
	}
	return false
}
