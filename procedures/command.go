package procedures

import (
	"fmt"
	"strings"

	"pinwalk/expect/point"
)

// ActionKind is what a technician asks the walk to do.
type ActionKind int

// Actions. Both front ends send these to a Controller; ParseCommand
// turns a typed line into one.
const (
	ActRead     ActionKind = iota // Text: the meter's value ("312", "4k7", "OL", "300V!")
	ActRetake                     // Text: the value measured again (replaces the last reading of the step for its verdict)
	ActCorrect                    // Text: the right value; Reason: why the earlier one was wrong
	ActConfirm                    // confirm a step that takes no reading, or move on from a finished one
	ActSkip                       // Reason
	ActNote                       // Text
	ActGoto                       // Step: a step id or number
	ActNext                       // the next open step (fault-finding: the best next measurement)
	ActSymptoms                   // Text: comma-separated symptoms
	ActPowerUp                    // fault-finding: power up now
	ActStop                       // fault-finding: stop measuring, go on to confirm the leading suspect
	ActChoose                     // Text: a point to measure ("V2 pin 3", "B1", "cold B1")
	ActName                       // practice: Text is REF:MODE
	ActOverride                   // Reason: let a stop through where the rule allows
	ActSimulate                   // practice: take the simulated amp's reading
	ActPredict                    // training: Text is the trainee's prediction
	ActReveal                     // practice: end the practice, reveal the fault and score
	// ActRefresh changes nothing: the controller settles (the measuring
	// loop makes its move) and reports the state.
	ActRefresh
	// Front-end actions: the controller does not change the session.
	ActList
	ActHelp
	ActQuit
)

// Command is one typed command: its words, what it does, and the action.
type Command struct {
	Words []string // first word (and aliases)
	Args  string   // what follows, for the help
	Help  string
	Kind  ActionKind
	// Modes limits the command to some modes (nil: every mode).
	Modes []Mode
}

// Commands is the one list of typed commands: the parser reads it and
// both front ends print their help from it.
var Commands = []Command{
	{Words: []string{"again", "retake"}, Args: "VALUE", Kind: ActRetake, Help: "measure the last point again: the new reading decides, both stay in the history"},
	{Words: []string{"correct"}, Args: "VALUE REASON", Kind: ActCorrect, Help: "correct a mistyped reading (the old one is kept, marked corrected, with your reason)"},
	{Words: []string{"y", "yes", "ok"}, Kind: ActConfirm, Help: "confirm a step that takes no reading (an empty line does the same)"},
	{Words: []string{"s", "skip"}, Args: "REASON", Kind: ActSkip, Help: "skip the step with a reason (safety skips are boxed in every summary; discharge checks cannot be skipped)"},
	{Words: []string{"override"}, Args: "REASON", Kind: ActOverride, Help: "let a stop through where the rule allows (earth on a set with no mains earth, a cold reading you have explained); recorded and boxed"},
	{Words: []string{"n", "note"}, Args: "TEXT", Kind: ActNote, Help: "add a note to the session"},
	{Words: []string{"goto"}, Args: "STEP", Kind: ActGoto, Help: "go to another step by id or number (gates apply)"},
	{Words: []string{"next"}, Kind: ActNext, Help: "the next open step (fault-finding: the best next measurement)"},
	{Words: []string{"list"}, Kind: ActList, Help: "list the steps and whether each is done"},
	{Words: []string{"symptoms", "symptom"}, Args: "LIST", Kind: ActSymptoms, Modes: []Mode{FaultFind, Practise}, Help: "what the amp does wrong, comma-separated"},
	{Words: []string{"measure"}, Args: "POINT", Kind: ActChoose, Modes: []Mode{FaultFind, Practise}, Help: "choose your own measurement (V2 pin 3, B1, cold B1)"},
	{Words: []string{"power"}, Kind: ActPowerUp, Modes: []Mode{FaultFind, Practise}, Help: "power up on the variac now, then measure live"},
	{Words: []string{"stop"}, Kind: ActStop, Modes: []Mode{FaultFind, Practise}, Help: "stop measuring and go on to confirm the leading suspect"},
	{Words: []string{"m"}, Kind: ActSimulate, Modes: []Mode{Practise}, Help: "take the simulated amp's reading"},
	{Words: []string{"name"}, Args: "REF:MODE", Kind: ActName, Modes: []Mode{Practise}, Help: "name the fault (like R7:open); a wrong name does not end the practice"},
	{Words: []string{"reveal"}, Kind: ActReveal, Modes: []Mode{Practise}, Help: "end the practice: show the hidden fault and the score"},
	{Words: []string{"?", "help"}, Kind: ActHelp, Help: "this help"},
	{Words: []string{"q", "quit"}, Kind: ActQuit, Help: "quit (the session is already saved)"},
}

// Action is one request to the controller.
type Action struct {
	Kind   ActionKind
	Text   string
	Reason string
	Step   string
	Point  point.Key
}

// ParseCommand reads one typed line: a command word and its arguments,
// or else a reading. No reading starts with a command word.
func ParseCommand(line string) Action {
	line = strings.TrimSpace(line)
	if line == "" {
		return Action{Kind: ActConfirm}
	}
	word, rest, _ := strings.Cut(line, " ")
	rest = strings.TrimSpace(rest)
	lw := strings.ToLower(word)
	for _, c := range Commands {
		for _, w := range c.Words {
			if w != lw {
				continue
			}
			a := Action{Kind: c.Kind}
			switch c.Kind {
			case ActSkip, ActOverride:
				a.Reason = rest
			case ActGoto:
				a.Step = rest
			case ActCorrect:
				v, why, _ := strings.Cut(rest, " ")
				a.Text, a.Reason = v, strings.TrimSpace(why)
			default:
				a.Text = rest
			}
			return a
		}
	}
	return Action{Kind: ActRead, Text: line}
}

// IsCommand reports whether a line starts with a command word (the
// full-screen view uses it to tell commands from readings as typed).
func IsCommand(line string) bool {
	return ParseCommand(line).Kind != ActRead
}

// CommandHelp is the help text of the typed commands for a mode, one
// line each.
func CommandHelp(mode Mode) []string {
	out := []string{"VALUE            record a reading (312, 4.7mA, 2k2, OL); end with ! to keep a reading the tool questions"}
	for _, c := range Commands {
		if !c.in(mode) {
			continue
		}
		w := strings.Join(c.Words, " / ")
		if c.Args != "" {
			w += " " + c.Args
		}
		out = append(out, fmt.Sprintf("%-16s %s", w, c.Help))
	}
	return out
}

func (c Command) in(mode Mode) bool {
	if c.Modes == nil {
		return true
	}
	for _, m := range c.Modes {
		if m == mode {
			return true
		}
	}
	return false
}
