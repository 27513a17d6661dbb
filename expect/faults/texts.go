package faults

import (
	"fmt"

	"pinwalk/expect/design"
)

// partName is a part's reference with its value: "R7 (470 Ω)".
func partName(t Target) string {
	name := t.Part.Ref
	if k := KindOf(t.Part); k != nil && k.Value != nil {
		if v := k.Value(t.Part); v != "" {
			name += " (" + v + ")"
		}
	}
	return name
}

// said returns a Describe function: the part's name and the words.
func said(words string) func(Target) string {
	return func(t Target) string { return partName(t) + " " + words }
}

// unplugged opens every confirm text: the amp off the mains and its
// capacitors discharged before a hand goes in.
const unplugged = "Unplugged and discharged: "

// confirmed closes a confirm text that takes no reading.
const confirmed = " Confirm when checked."

// findWhy closes a replace text for a part that may have failed by
// another part's doing.
const findWhy = " Find why it failed before powering up again."

// lampFirst is the first power-up after a supply repair (common practice).
const lampFirst = " Power up on the lamp limiter (or the variac from low) first."

// fuseNote is the fuse a repair is powered with: the design's rating.
func fuseNote(d *design.Design) string {
	for _, p := range d.PartsOfKind(design.Fuse) {
		return fmt.Sprintf(" Fit a fuse of the rated value (%s, %s) and no larger.", p.Ref, fuseRating(p))
	}
	return ""
}
