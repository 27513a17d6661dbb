package spice

import (
	"regexp"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
	"pinwalk/expect/valves"
)

// elementLine matches an element line of the deck: its name and the rest.
var elementLine = regexp.MustCompile(`^([A-Za-z][A-Za-z0-9_]*)\s+(.*)$`)

// TestExportCoversTheModel: for every demo design and template, every net
// of pinwalk's network is a node of the netlist, every element name is
// unique as SPICE reads it (case-insensitively), every valve section has
// a current probe on each electrode pinwalk reports, and every element
// line is preceded or followed by a comment somewhere naming its part.
func TestExportCoversTheModel(t *testing.T) {
	for _, d := range allDesigns(t) {
		n, err := Export(d)
		if err != nil {
			t.Fatalf("%s: %v", d.File, err)
		}
		m, err := amp.Build(d)
		if err != nil {
			t.Fatal(err)
		}
		for _, net := range d.NetNames() {
			if _, inNet := m.Node(net); !inNet {
				continue
			}
			if _, ok := n.Node(net); !ok {
				t.Errorf("%s: net %s of pinwalk's network is not in the netlist", d.File, net)
			}
		}
		for _, sec := range m.Sections {
			want := []string{valves.Plate, valves.Grid}
			if sec.Pentode {
				want = append(want, valves.Screen)
			}
			for _, e := range want {
				found := false
				for _, p := range n.Probes {
					found = found || (p.Section == sec.Name() && p.Electrode == e)
				}
				if !found {
					t.Errorf("%s: no current probe on %s %s", d.File, sec.Name(), e)
				}
			}
		}
		deck := n.Deck(DeckOptions{})
		seen := map[string]bool{}
		for _, line := range strings.Split(deck, "\n") {
			if line == "" || line[0] == '*' || line[0] == '.' || line[0] == '+' {
				continue
			}
			mm := elementLine.FindStringSubmatch(line)
			if mm == nil {
				t.Errorf("%s: not an element line: %q", d.File, line)
				continue
			}
			name := strings.ToLower(mm[1])
			if seen[name] {
				t.Errorf("%s: element %s written twice", d.File, mm[1])
			}
			seen[name] = true
			if !strings.ContainsRune("rclvdb", rune(name[0])) {
				t.Errorf("%s: element %s: unexpected kind letter", d.File, mm[1])
			}
		}
		if !strings.Contains(deck, ".tran ") || !strings.HasSuffix(deck, ".end\n") {
			t.Errorf("%s: deck has no .tran line or does not end in .end", d.File)
		}
	}
}

// TestNodeNames: net names SPICE would misread (case-insensitive
// duplicates, punctuation, a leading digit, "0") become distinct plain
// nodes, and the deck lists them.
func TestNodeNames(t *testing.T) {
	src := `pinwalk: 1
title: node names
mains: {volts: 230, hz: 50}
parts:
  T1:
    power-transformer:
      primary: {volts: 230, dcr: 10R}
      secondaries:
        H: {volts: 6.3, rated: 1A, dcr: 0R1, ends: [H1, H2], centre: 0V}
  U1: {dc-supply: 250V, dcr: 100R, between: [B+, 0V]}
  R1: {resistor: 10k, between: [B+, b1]}
  R2: {resistor: 10k, between: [b1, B1]}
  R3: {resistor: 10k, between: [B1, "0"]}
  R4: {resistor: 10k, between: ["0", 2nd]}
  R5: {resistor: 10k, between: [2nd, 0V]}
  V1:
    valve: 12AX7
    A: {plate: B1, grid: 0V, cathode: 0V}
    B: unused
    heater: [H1, H2]
`
	d, probs := design.Parse("names.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Errors())
	}
	n, err := Export(d)
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]string{}
	for _, net := range []string{"B+", "b1", "B1", "0", "2nd"} {
		node, ok := n.Node(net)
		if !ok {
			t.Fatalf("net %s: no node", net)
		}
		if !regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_]*$`).MatchString(node) {
			t.Errorf("net %s: node %q is not a plain SPICE name", net, node)
		}
		if other, dup := seen[strings.ToLower(node)]; dup {
			t.Errorf("nets %s and %s share node %s", other, net, node)
		}
		seen[strings.ToLower(node)] = net
	}
	if node, _ := n.Node("0V"); node != "0" {
		t.Errorf("ground 0V is node %q, want 0", node)
	}
	deck := n.Deck(DeckOptions{})
	node, _ := n.Node("B+")
	if !strings.Contains(deck, "net B+ is node "+node) {
		t.Errorf("the deck does not say which node net B+ became")
	}
}
