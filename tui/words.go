package tui

import (
	"regexp"
	"strconv"
	"strings"

	"pinwalk/expect/point"
	"pinwalk/procedures"
)

// Texts from the engine (band notes, the measuring loop's lines, stop
// texts, errors) may spell a point by its key ("V2.3 dc_volts",
// "cold:B1 ohms", "V3.8 reads 19 V"). words puts the one labelling
// function's words (procedures/jobsheet Labeller.Label, through
// env.label) in their place, so no key reaches a screen.
var (
	quantityRE = `(dc_volts|dc_amps|ac_volts|ac_amps|ripple_volts|tone_volts|ohms)`
	// A prefixed key: its id may hold spaces ("cold:T1 HT half a ohms").
	prefixedKey = regexp.MustCompile(`\b(cold|part|bias|discharge):([^,;:()"]+?) ` + quantityRE + `\b`)
	// A live key, an earth or mains key.
	liveKey = regexp.MustCompile(`\b([A-Za-z][A-Za-z0-9_+\-]*(?:\.[0-9]+)?) ` + quantityRE + `\b`)
	// A bare socket pin: "V3.8".
	barePin = regexp.MustCompile(`\b([A-Z]+[0-9]+[A-Z]?)\.([0-9]+)\b`)
	// An information gain in bits.
	gainBits = regexp.MustCompile(`(by )?about ([0-9.]+) bits`)
)

// words rewrites an engine text for the screen: point keys become
// labels, and (for a trainee or an apprentice) an information gain in
// bits becomes what it does for the suspects.
func (e *env) words(text string) string {
	text = prefixedKey.ReplaceAllStringFunc(text, e.keyWords)
	text = liveKey.ReplaceAllStringFunc(text, e.keyWords)
	text = barePin.ReplaceAllStringFunc(text, func(s string) string {
		return strings.TrimSuffix(e.label(point.LiveKey(s, point.DCVolts)), ", DC volts")
	})
	if m := e.run.Sess.Mode; m == procedures.Training || m == procedures.Practise {
		text = gainBits.ReplaceAllStringFunc(text, func(s string) string {
			sub := gainBits.FindStringSubmatch(s)
			b, err := strconv.ParseFloat(sub[2], 64)
			if err != nil {
				return s
			}
			return gainWords(b)
		})
	}
	return text
}

func (e *env) keyWords(s string) string {
	k, err := point.Parse(s)
	if err != nil {
		return s
	}
	return e.label(k)
}

// gainWords says in words what a measurement's expected information gain
// does for the suspects (1 bit splits two equally likely suspects; common
// reading of the quantity).
func gainWords(bits float64) string {
	switch {
	case bits >= 0.9:
		return "splits the two leading suspects"
	case bits >= 0.5:
		return "tells most of the leading suspects apart"
	case bits >= 0.2:
		return "narrows the suspects"
	}
	return "says a little about the suspects"
}
