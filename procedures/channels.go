package procedures

import (
	"fmt"
	"slices"
	"strings"

	"pinwalk/expect/ac"
	"pinwalk/expect/design"
)

// Channel is one signal path of the amp: an input grid, the stages a
// signal there passes through and the output transformers it reaches.
type Channel struct {
	// Name is what the technician calls it: "left" or "right" where the
	// design's notes on the channel's parts say so, else "channel 1",
	// "channel 2" in design order.
	Name  string
	Input string // the input grid net
	// OTs are the output transformers the channel drives.
	OTs    []*design.Part
	stages []stage
}

// Title is the channel's name with its output transformer: "left
// channel (OT1)", "channel 2 (OT2)".
func (c Channel) Title() string {
	name := c.Name
	if !strings.HasPrefix(name, "channel") {
		name += " channel"
	}
	var refs []string
	for _, ot := range c.OTs {
		refs = append(refs, ot.Ref)
	}
	if len(refs) == 0 {
		return name
	}
	return name + " (" + strings.Join(refs, ", ") + ")"
}

// Refs lists the valve sections of the channel ("V1A", "V2").
func (c Channel) Refs() []string {
	var out []string
	for _, s := range c.stages {
		out = append(out, s.ref+s.section)
	}
	return out
}

// ChannelTitles names each output transformer that is a channel's only
// one by its channel's title ("left channel (OT1)"), as the walk names a
// channel everywhere: the power-out step asks by it and the job sheets
// list the power out by it.
func ChannelTitles(b *BenchModel) map[string]string {
	title := map[string]string{}
	for _, c := range ChannelsOf(b) {
		if len(c.OTs) == 1 {
			title[c.OTs[0].Ref] = c.Title()
		}
	}
	return title
}

// ChannelsOf finds the channels of a design: each input grid (as the ac
// package finds them) with the stages its signal reaches and the output
// transformers on their plates. Inputs that reach the same output
// transformers (two inputs mixed into one channel) are one channel. A
// mono amp has one; a stereo amp two.
func ChannelsOf(b *BenchModel) []Channel {
	an, err := ac.New(b.M)
	if err != nil {
		return nil
	}
	var out []Channel
	for _, in := range an.InputNets() {
		st := signalChain(b, in)
		ots := speakersOf(b.D, st)
		if len(ots) == 0 {
			continue
		}
		dup := false
		for _, c := range out {
			if slices.Equal(otRefs(c.OTs), otRefs(ots)) {
				dup = true
			}
		}
		if !dup {
			out = append(out, Channel{Input: in, OTs: ots, stages: st})
		}
	}
	for i := range out {
		out[i].Name = channelWord(b.D, out[i])
		if out[i].Name == "" {
			out[i].Name = fmt.Sprintf("channel %d", i+1)
		}
	}
	// Two channels both called left (or right) are named by number.
	for i := range out {
		for j := range out {
			if i != j && out[i].Name == out[j].Name {
				for k := range out {
					out[k].Name = fmt.Sprintf("channel %d", k+1)
				}
				return out
			}
		}
	}
	return out
}

func otRefs(ps []*design.Part) []string {
	var out []string
	for _, p := range ps {
		out = append(out, p.Ref)
	}
	return out
}

// channelWord is "left" or "right" when the notes of the parts on the
// channel's nets (its input grid leak, its stages' loads) use exactly one
// of the two words, else "".
func channelWord(d *design.Design, c Channel) string {
	nets := map[string]bool{c.Input: true}
	for _, s := range c.stages {
		for _, pd := range []string{s.grid.Net, s.plate.Net, s.cathode.Net} {
			if pd != "" && pd != d.Ground {
				nets[pd] = true
			}
		}
	}
	left, right := false, false
	for n := range nets {
		for _, u := range d.Nets[n] {
			p := d.ByRef[u.Ref]
			if p == nil || p.Kind == design.Valve {
				continue
			}
			for _, w := range strings.FieldsFunc(strings.ToLower(p.Note), func(r rune) bool { return r < 'a' || r > 'z' }) {
				left = left || w == "left"
				right = right || w == "right"
			}
		}
	}
	switch {
	case left && !right:
		return "left"
	case right && !left:
		return "right"
	}
	return ""
}
