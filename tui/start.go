package tui

import (
	"fmt"
	"strings"

	"pinwalk/procedures"
)

// StartText is the word on the session at its start, for the first
// screen and plain mode: new or resumed from its file, and the exact
// command to start a fresh session instead (or, for a new one, to resume
// it later). plain adds --plain to the commands.
func StartText(st Start, path string, plain bool) []string {
	if path == "" {
		return []string{"This session has no file: its readings go when you quit."}
	}
	if st.Resumed {
		fresh := st.Fresh
		if fresh == "" {
			fresh = "NEWFILE"
		}
		return []string{
			fmt.Sprintf("Resumed from %s (%d readings so far; saved after every entry).", path, st.Readings),
			"A fresh session instead: quit, then " + walkCommand(st, fresh, plain),
		}
	}
	return []string{
		"New session, saved after every entry to " + path + ".",
		"Resume it later: " + walkCommand(st, path, plain),
	}
}

// CommandLines are the exact commands to carry on with a session and to
// write its job sheets (the technician's and the customer's).
func CommandLines(st Start, path string, plain bool) []string {
	if path == "" {
		return nil
	}
	f := shellWord(path)
	base := strings.TrimSuffix(strings.TrimSuffix(path, ".yaml"), ".pinwalk")
	return []string{
		"Resume: " + walkCommand(st, path, plain),
		"Job sheet: pinwalk report " + f + " -o " + shellWord(base+"-sheet.html"),
		"Customer sheet: pinwalk report " + f + " --for customer -o " + shellWord(base+"-customer.html"),
	}
}

// fill takes what Start leaves empty from the session: the design file
// it names and its mode.
func (st Start) fill(s *procedures.Session) Start {
	if st.Design == "" {
		st.Design = s.Design.File
	}
	if st.Mode == "" {
		st.Mode = s.Mode
	}
	return st
}

// walkCommand is the pinwalk walk command line for a session file.
func walkCommand(st Start, path string, plain bool) string {
	c := "pinwalk walk " + designWord(st.Design)
	if st.Mode != "" && st.Mode != procedures.BringUp {
		c += " --mode " + string(st.Mode)
	}
	c += " --session " + shellWord(path)
	if plain {
		c += " --plain"
	}
	return c
}

// designWord is the design as the command line names it.
func designWord(d string) string {
	if d == "" {
		return "DESIGN"
	}
	return shellWord(d)
}

// shellWord quotes a word for a POSIX shell when it needs it.
func shellWord(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r == '/' || r == '.' || r == '-' || r == '_' || r == ':' || r == '+' || r == '=' || r == '@' || r == ',' ||
			(r >= '0' && r <= '9') || (r >= 'a' && r <= 'z') || (r >= 'A' && r <= 'Z'))
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
