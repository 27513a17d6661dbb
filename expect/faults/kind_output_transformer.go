package faults

import (
	"fmt"
	"math"
	"slices"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/units"
)

// Output-transformer faults: "open",
//
//	OT1      single-ended: the primary; push-pull: the centre-tap lead
//	         (both halves stay joined end to end, parted from the
//	         centre-tap net)
//	OT1.a/b  the half to the first / second end of a push-pull primary
//	         (both segments of a half with a screen tap)
//	OT1.sec  a wired secondary (secondary: {hot: SPK})
//
// and "to-chassis", the primary broken down to its core or frame (the
// chassis): at the plate end of a single-ended primary, at the end of the
// push-pull half named (OT1.a, OT1.b), or at the centre-tap lead of a
// push-pull primary (OT1). Powered it puts B+ on the chassis through a
// half primary's DCR, amps: the mains fuse blows (modelled as the bench
// then shows it, blowFuse); cold, that end reads the short to chassis.
// Far rarer than an open winding (common practice for the weight).
//
// Windings open less often than capacitors fail (common practice for the
// weight).

// SecondaryWinding is the suffix of an output transformer's wired
// secondary in a fault reference ("OT1.sec").
const SecondaryWinding = "sec"

func init() {
	register(Kind{
		Kind: design.OutputTransformer,
		Subparts: func(p *design.Part) []string {
			var out []string
			if p.OT.Centre != "" {
				out = append(out, "a", "b")
			}
			if p.OT.SecHot != "" {
				out = append(out, SecondaryWinding)
			}
			return out
		},
		Healthy: func(p *design.Part) OutReading {
			return OutReading{Ohms: p.OT.DCR[0] + p.OT.DCR[1], OK: p.OT.DCR[0] > 0, Words: "its primary DC resistance end to end, the secondary a fraction of an ohm, and open from every winding to the frame"}
		},
		Modes: []ModeSpec{
			{Mode: Open, Subparts: []string{"", "a", "b", SecondaryWinding}, Prior: 0.4,
				Live: func(v *amp.Values, t Target) {
					p := t.Part
					switch t.Sub {
					case "a", "b":
						setSlots(v, slotsWithRole(t.M, p.Ref, design.HalfRoles(t.Sub)...), math.Inf(1))
					case SecondaryWinding:
						setSlots(v, slotsWithRole(t.M, p.Ref, "secondary"), math.Inf(1))
					default:
						setSlots(v, slotsWithRole(t.M, p.Ref, append(append([]string{"primary"}, design.HalfRoles("a")...), design.HalfRoles("b")...)...), math.Inf(1))
					}
				},
				Cold: func(n ColdNet, t Target) {
					p, ot := t.Part, t.Part.OT
					switch {
					case t.Sub == "a" || t.Sub == "b":
						n.Drop(otSegments(p, design.HalfRoles(t.Sub)...))
					case t.Sub == SecondaryWinding:
						n.Drop(otSegments(p, "secondary"))
					case ot.Centre == "":
						n.Drop(otSegments(p, "primary"))
					default:
						lead := p.Ref + "~centre-tap"
						n.Edit(func(e *ColdEdge) bool {
							if e.Ref != p.Ref {
								return false
							}
							if e.A == ot.Centre {
								e.A = lead
								return true
							}
							if e.B == ot.Centre {
								e.B = lead
								return true
							}
							return false
						})
					}
				},
				Describe: func(t Target) string {
					p := t.Part
					switch t.Sub {
					case "a":
						return fmt.Sprintf("%s primary half %s–%s open", p.Ref, p.OT.Centre, p.OT.Ends[0])
					case "b":
						return fmt.Sprintf("%s primary half %s–%s open", p.Ref, p.OT.Centre, p.OT.Ends[1])
					case SecondaryWinding:
						return fmt.Sprintf("%s secondary %s–%s open (no sound; feedback taken from the speaker is lost)", p.Ref, p.OT.SecHot, p.OT.SecCold)
					}
					if p.OT.Centre != "" {
						return partName(t) + " primary centre-tap lead open (both halves)"
					}
					return partName(t) + " primary open"
				},
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: math.Inf(1), OK: true, Words: "open across the failed winding"}
				},
				Confirm: func(t Target) string {
					p := t.Part
					which := "the primary end to end"
					switch {
					case t.Sub == "a" || t.Sub == "b":
						which = "each half of the primary from the centre tap to its end (the two should be within a few per cent of each other)"
					case t.Sub == SecondaryWinding:
						which = "the secondary at the speaker jack with the speaker unplugged (a fraction of an ohm to an ohm or so)"
					case p.OT.Centre != "":
						which = "from the centre tap to each end of the primary"
					}
					return fmt.Sprintf(unplugged+"with the valves out of their sockets, measure %s of %s: an open winding reads open; then measure from each winding to the frame (it should read open: a winding to frame short puts B+ on the chassis)."+confirmed, which, p.Ref)
				},
				Replace: replaceOT},
			{Mode: ToChassis, Subparts: []string{"", "a", "b"}, Prior: 0.05, PoweredShort: true,
				Live: func(v *amp.Values, t Target) { blowFuse(t.M, v) },
				Cold: func(n ColdNet, t Target) {
					// Burnt insulation reads like a broken-down capacitor:
					// milliohms to hundreds of ohms.
					r := ShortedCapOhms
					n.Add(ColdEdge{A: otShortEnd(t), B: t.M.D.Ground, Ohms: r, Ref: t.Part.Ref,
						Tol: design.Tolerance{Lo: ShortedCapLoOhms/r - 1, Hi: ShortedCapHiOhms/r - 1}})
				},
				Describe: func(t Target) string {
					return fmt.Sprintf("%s primary shorted to chassis at %s (B+ on the frame: the mains fuse blows)", t.Part.Ref, otShortEnd(t))
				},
				OutOfCircuit: func(t Target) OutReading {
					return OutReading{Ohms: 0, OK: true, Words: "a low reading from the primary to the frame (it should read open, over 20 MΩ on an insulation tester)"}
				},
				Confirm: func(t Target) string {
					return fmt.Sprintf(unplugged+"with the valves out, lift the primary leads of %s and measure from each to its frame and core (the chassis): a good winding reads open (over 20 MΩ on an insulation tester at 500 V); a breakdown reads ohms to kilohms. Look for a burnt spot or a scorched lead where it leaves the bobbin."+confirmed, t.Part.Ref)
				},
				Replace: replaceOT},
		},
	})
}

// otShortEnd is the net at which a primary broken down to chassis touches
// it: a single-ended primary's plate end, a push-pull half's end, or a
// push-pull primary's centre tap.
func otShortEnd(t Target) string {
	ot := t.Part.OT
	switch {
	case t.Sub == "a":
		return ot.Ends[0]
	case t.Sub == "b":
		return ot.Ends[1]
	case ot.Centre != "":
		return ot.Centre
	}
	return ot.Ends[1]
}

func replaceOT(t Target) string {
	p := t.Part
	imp := "the same primary impedance"
	if p.OT.Impedance > 0 {
		imp = fmt.Sprintf("a %s primary", units.Format(p.OT.Impedance, units.Ohms))
		if p.OT.Load > 0 {
			imp += fmt.Sprintf(" into %s", units.Format(p.OT.Load, units.Ohms))
		}
	}
	s := fmt.Sprintf("Fit an output transformer in %s with %s, the same power rating and the primary current it carries", p.Ref, imp)
	if p.OT.Centre != "" {
		s += "; push-pull: the same screen taps, if any, and wire the phase the same way (feedback taken from the secondary becomes positive if a winding is reversed: check for oscillation on a dummy load first)"
	}
	return s + "." + findWhy
}

// otSegments matches the cold-network edges of an output transformer's
// winding segments with the given roles (design.WindingSegment): a half
// split at its screen tap is two edges, and the secondary is not part of
// the primary.
func otSegments(p *design.Part, roles ...string) func(e ColdEdge) bool {
	var want [][2]string
	for _, sg := range p.OT.Segments() {
		if slices.Contains(roles, sg.Role) {
			want = append(want, [2]string{sg.A, sg.B})
		}
	}
	return func(e ColdEdge) bool {
		if e.Ref != p.Ref {
			return false
		}
		for _, w := range want {
			if (e.A == w[0] && e.B == w[1]) || (e.A == w[1] && e.B == w[0]) {
				return true
			}
		}
		return false
	}
}
