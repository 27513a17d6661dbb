package design

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"unicode/utf8"

	"gopkg.in/yaml.v3"

	"pinwalk/expect/units"
	"pinwalk/expect/valves"
)

// MaxFileBytes is the largest design file the loader reads.
const MaxFileBytes = 256 << 10

// Load reads and validates a design file. It returns the design (nil
// when the file could not be parsed at all) and every problem found; the
// design is usable only when problems.Errors() is empty.
func Load(path string) (*Design, Problems) {
	f, err := os.Open(path)
	if err != nil {
		return nil, Problems{{File: path, Pos: Pos{1, 1}, Field: "file", Msg: err.Error()}}
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, MaxFileBytes+1))
	if err != nil {
		return nil, Problems{{File: path, Pos: Pos{1, 1}, Field: "file", Msg: err.Error()}}
	}
	return Parse(path, data)
}

// Parse reads a design from bytes; name is used in messages.
func Parse(name string, data []byte) (*Design, Problems) {
	l := &loader{file: name}
	if len(data) > MaxFileBytes {
		l.errAt(Pos{1, 1}, "file", "file is larger than %d KiB: expected a design file written by hand", MaxFileBytes>>10)
		return nil, l.probs
	}
	if strings.ContainsRune(string(data), 0) {
		l.errAt(Pos{1, 1}, "file", "not a text file: expected a YAML design file in UTF-8")
		return nil, l.probs
	}
	if !utf8.Valid(data) {
		pos, b := firstInvalidUTF8(data)
		l.errAt(pos, "file", "byte 0x%02X is not UTF-8 text: expected a design file saved as UTF-8", b)
		return nil, l.probs
	}
	var doc yaml.Node
	data, l.marks = markFlowPlaceholders(data)
	dec := yaml.NewDecoder(bytes.NewReader(data))
	if err := dec.Decode(&doc); err != nil && !errors.Is(err, io.EOF) {
		if line := firstBadLine(data); line > 0 {
			l.errAt(Pos{line, 1}, "file", "not valid YAML: %s", stripYAMLLine(cleanYAMLError(err)))
		} else {
			l.errAt(yamlErrPos(err), "file", "not valid YAML: %s", cleanYAMLError(err))
		}
		return nil, l.probs
	}
	if doc.Kind == 0 || len(doc.Content) == 0 {
		l.errAt(Pos{1, 1}, "file", "the file is empty: expected a design starting with `pinwalk: %d`", SchemaVersion)
		return nil, l.probs
	}
	// yaml.v3 reads the first document only: a second one (a design pasted
	// after another, behind a --- line) would be dropped without a word.
	var next yaml.Node
	if err := dec.Decode(&next); !errors.Is(err, io.EOF) {
		pos := Pos{next.Line, next.Column}
		if err != nil || pos.Line == 0 {
			pos = secondDocumentMarker(data)
		}
		l.errAt(pos, "file", "a second YAML document starts here (---): a design file holds one design; move the rest to a file of its own, or delete the --- line")
		return nil, l.probs
	}
	if a := findAlias(&doc); a != nil {
		l.errf(a, "file", "YAML anchors and aliases (& and *) are not allowed in design files: write each part out")
		return nil, l.probs
	}
	if k, field := nonScalarKey(doc.Content[0], ""); k != nil {
		hint := ""
		top, _, _ := strings.Cut(field, ".")
		if k.Kind == yaml.SequenceNode && !contains([]string{"file", "pinwalk", "title", "mains", "tolerances", "ground", "valve-files", "parts", "notes"}, top) {
			hint = "a list of nets goes after its field name: between: [K1, 0V]"
		}
		l.add(posOf(k), Error, field, hint, "a key here is %s: expected a plain name before the colon, like R1, volts or between", describe(k))
		return nil, l.probs
	}
	sum := sha256.Sum256(data)
	d := &Design{File: name, Hash: hex.EncodeToString(sum[:]), ByRef: map[string]*Part{}, Nets: map[string][]NetUse{}}
	l.design(d, doc.Content[0])
	if len(l.probs.Errors()) == 0 {
		l.validate(d)
	}
	l.templateHints(d)
	l.probs.Sort()
	return d, l.probs
}

// templateHints points "missing ..." errors with no hint of their own at a
// template that shows the whole part (see templates.go).
func (l *loader) templateHints(d *Design) {
	for i := range l.probs {
		pr := &l.probs[i]
		if pr.Severity != Error || pr.Hint != "" || !strings.HasPrefix(pr.Msg, "missing ") {
			continue
		}
		ref, _, _ := strings.Cut(pr.Field, ".")
		p := d.ByRef[ref]
		if p == nil {
			if pr.Field == "pinwalk" || pr.Field == "mains" || pr.Field == "parts" {
				pr.Hint = "see `pinwalk new --list`: every template starts with these top-level fields"
			}
			continue
		}
		pushPull := p.OT != nil && p.OT.Centre != ""
		bridge := p.Rect != nil && p.Rect.Bridge
		pr.Hint = TemplateHint(p.Kind, pushPull, bridge)
	}
}

// secondDocumentMarker returns the position of the --- line that starts
// the file's second YAML document (the first marker after any content,
// since a file may open with one), or line 1 when there is none to find.
func secondDocumentMarker(data []byte) Pos {
	content := false
	for i, line := range strings.Split(string(data), "\n") {
		t := strings.TrimRight(line, " \t\r")
		if t == "---" || strings.HasPrefix(t, "--- ") || strings.HasPrefix(t, "---\t") {
			if content {
				return Pos{i + 1, 1}
			}
			content = true // an opening marker
			continue
		}
		if s := strings.TrimSpace(t); s != "" && !strings.HasPrefix(s, "#") && !strings.HasPrefix(s, "%") {
			content = true
		}
	}
	return Pos{1, 1}
}

// nonScalarKey returns the first mapping key, in document order, that is
// not a plain scalar (`{[]}`, `? [a, b]: x`), with the dotted field path of
// the mapping holding it ("file" at the top; part references stand for
// themselves, as in every other message), or nil.
func nonScalarKey(n *yaml.Node, path string) (*yaml.Node, string) {
	field := path
	if field == "" {
		field = "file"
	}
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			if k.Kind != yaml.ScalarNode {
				return k, field
			}
			sub := join(path, k.Value)
			if path == "parts" {
				sub = k.Value
			}
			if bad, f := nonScalarKey(v, sub); bad != nil {
				return bad, f
			}
		}
	case yaml.SequenceNode:
		for _, c := range n.Content {
			if bad, f := nonScalarKey(c, path); bad != nil {
				return bad, f
			}
		}
	}
	return nil, ""
}

// findAlias returns the first node, in document order, that is an alias
// or carries an anchor, or nil.
func findAlias(n *yaml.Node) *yaml.Node {
	if n.Kind == yaml.AliasNode || n.Anchor != "" {
		return n
	}
	for _, c := range n.Content {
		if a := findAlias(c); a != nil {
			return a
		}
	}
	return nil
}

func yamlErrPos(err error) Pos {
	var te *yaml.TypeError
	msg := err.Error()
	if errors.As(err, &te) && len(te.Errors) > 0 {
		msg = te.Errors[0]
	}
	var line int
	if i := strings.Index(msg, "line "); i >= 0 {
		fmt.Sscanf(msg[i+5:], "%d", &line)
	}
	if line < 1 {
		line = 1
	}
	return Pos{line, 1}
}

// firstInvalidUTF8 returns the position and value of the first byte of
// data that is not valid UTF-8 (data must hold one).
func firstInvalidUTF8(data []byte) (Pos, byte) {
	pos := Pos{1, 1}
	for i := 0; i < len(data); {
		r, size := utf8.DecodeRune(data[i:])
		if r == utf8.RuneError && size <= 1 {
			return pos, data[i]
		}
		if r == '\n' {
			pos.Line, pos.Col = pos.Line+1, 1
		} else {
			pos.Col++
		}
		i += size
	}
	return pos, 0
}

// firstBadLine finds the line where YAML parsing first fails: the smallest
// n such that the first n lines do not parse, by bisection (a prefix of a
// block-style file that ends on a whole line parses unless it holds the
// mistake). yaml.v3 reports parser errors at the start of the enclosing
// block, counted from 0, so its own line number is not used when this finds
// one. It returns 0 when no prefix fails on its own.
func firstBadLine(data []byte) int {
	lines := strings.SplitAfter(string(data), "\n")
	fails := func(n int) bool {
		var doc yaml.Node
		return yaml.Unmarshal([]byte(strings.Join(lines[:n], "")), &doc) != nil
	}
	lo, hi := 1, len(lines)
	if !fails(hi) {
		return 0
	}
	for lo < hi {
		mid := (lo + hi) / 2
		if fails(mid) {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	return lo
}

// stripYAMLLine drops yaml.v3's "line N: " prefix from a message.
func stripYAMLLine(msg string) string {
	if strings.HasPrefix(msg, "line ") {
		if i := strings.Index(msg, ": "); i > 0 {
			return msg[i+2:]
		}
	}
	return msg
}

func cleanYAMLError(err error) string {
	s := err.Error()
	s = strings.TrimPrefix(s, "yaml: ")
	return s
}

type loader struct {
	file  string
	probs Problems
	marks map[Pos]bool // placeholder "?" rewritten by markFlowPlaceholders
	// groundPos is where the ground net is named (the top-level mapping
	// when the file leaves it to the default).
	groundPos Pos
	// sideValves are the user's valve types from the design's valve-files;
	// they take precedence over the library.
	sideValves []*valves.Type
}

// lookupValve finds a valve type in the design's side files, then in the
// library.
// kindWords names a valve kind for messages.
func kindWords(k valves.Kind) string {
	switch k {
	case valves.Regulator:
		return "gas regulator"
	case valves.Heptode:
		return "pentagrid converter"
	case valves.Diode:
		return "signal diodes"
	}
	return string(k)
}

func (l *loader) lookupValve(name string) (*valves.Type, bool) {
	key := strings.ToUpper(strings.TrimSpace(name))
	for _, t := range l.sideValves {
		if t.Unit {
			continue
		}
		if strings.ToUpper(t.Name) == key {
			return t, true
		}
		for _, a := range t.Aliases {
			if strings.ToUpper(a) == key {
				return t, true
			}
		}
	}
	return valves.Lookup(name)
}

// valveFiles loads the user's valve side files (paths relative to the
// design file), in the library's schema; types with datasheet rows and no
// model are fitted on load.
func (l *loader) valveFiles(d *Design, n *yaml.Node) {
	list := []*yaml.Node{n}
	if n.Kind == yaml.SequenceNode {
		list = n.Content
	}
	for _, fn := range list {
		name, ok := l.scalar(fn, "valve-files", "a valve side file's path, relative to this design file")
		if !ok {
			continue
		}
		path := name
		if !filepath.IsAbs(path) {
			path = filepath.Join(filepath.Dir(l.file), name)
		}
		types, err := valves.LoadSideFile(path)
		if err != nil {
			l.errf(fn, "valve-files", "%v", err)
			continue
		}
		l.sideValves = append(l.sideValves, types...)
		d.SideValves = append(d.SideValves, types...)
	}
}

func posOf(n *yaml.Node) Pos { return Pos{n.Line, n.Column} }

func (l *loader) errAt(pos Pos, field, format string, args ...any) {
	l.probs = append(l.probs, Problem{File: l.file, Pos: pos, Field: field, Severity: Error, Msg: fmt.Sprintf(format, args...)})
}

func (l *loader) add(pos Pos, sev Severity, field, hint, format string, args ...any) {
	l.probs = append(l.probs, Problem{File: l.file, Pos: pos, Field: field, Severity: sev, Msg: fmt.Sprintf(format, args...), Hint: hint})
}

func (l *loader) errf(n *yaml.Node, field, format string, args ...any) {
	l.errAt(posOf(n), field, format, args...)
}

// pairs returns the key/value pairs of a mapping node, reporting duplicate
// keys and keys not in allowed (when allowed is non-nil).
func (l *loader) pairs(n *yaml.Node, field string, allowed []string) [][2]*yaml.Node {
	if n.Kind != yaml.MappingNode {
		l.errf(n, field, "expected a mapping of fields (key: value), found %s", describe(n))
		return nil
	}
	seen := map[string]bool{}
	var out [][2]*yaml.Node
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		key := k.Value
		if seen[key] {
			l.errf(k, join(field, key), "%q is given twice", key)
			continue
		}
		seen[key] = true
		if allowed != nil && !contains(allowed, key) {
			msg := fmt.Sprintf("unknown field %q", key)
			if dym := didYouMean(key, allowed); dym != "" {
				msg += ": " + dym
			} else if syn := fieldSynonym(key, allowed); syn != "" {
				msg += fmt.Sprintf(": did you mean %q? (expected one of %s)", syn, strings.Join(allowed, ", "))
			} else {
				msg += ": expected one of " + strings.Join(allowed, ", ")
			}
			l.add(posOf(k), Error, join(field, key), unknownFieldHint(key, v, allowed), "%s", msg)
			continue
		}
		out = append(out, [2]*yaml.Node{k, v})
	}
	return out
}

// fieldSynonyms maps words people write for a field to the field names
// the design file uses; the first one the context allows is suggested.
var fieldSynonyms = map[string][]string{
	"between":    {"ends"},
	"ends":       {"between"},
	"nets":       {"between", "ends"},
	"pins":       {"between", "ends"},
	"impedance":  {"load"},
	"speaker":    {"load"},
	"wiring":     {"volts"},
	"voltage":    {"volts"},
	"rating":     {"rated", "watts", "volts"},
	"current":    {"rated"},
	"amps":       {"rated"},
	"power":      {"watts"},
	"dielectric": {"kind"},
	"type":       {"kind", "build"},
	"material":   {"kind", "build"},
	"anode":      {"plate", "plates", "anodes"},
	"anodes":     {"plates"},
	"plates":     {"anodes"},
	"g1":         {"grid"},
	"g2":         {"screen"},
	"g3":         {"suppressor"},
	"k":          {"cathode"},
	"filament":   {"heater"},
	"heaters":    {"heater"},
	"windings":   {"secondaries"},
	"wiper_net":  {"wiper"},
	"position":   {"setting"},
	"film":       {"capacitor"},
	"mica":       {"capacitor"},
	"ceramic":    {"capacitor"},
	"resistors":  {"resistor"},
	"caps":       {"capacitor", "electrolytic"},
	"chokes":     {"winding"},
}

func fieldSynonym(key string, allowed []string) string {
	for _, s := range fieldSynonyms[strings.ToLower(key)] {
		if contains(allowed, s) {
			return s
		}
	}
	return ""
}

// unknownFieldHint gives a one-line hint for an unknown field in common
// cases: a comma in unquoted text inside {...}, or a winding written
// directly under power-transformer.
func unknownFieldHint(key string, v *yaml.Node, allowed []string) string {
	switch {
	case strings.ContainsAny(key, " \t") && v.Tag == "!!null":
		return "a comma inside {...} starts a new field: quote text that has commas, like note: 'bleeder, also minimum load'"
	case contains(allowed, "secondaries") && v.Kind == yaml.MappingNode:
		return "windings go under secondaries: (secondaries: {" + key + ": {volts: .., rated: .., ends: [..]}})"
	}
	return ""
}

func describe(n *yaml.Node) string {
	switch n.Kind {
	case yaml.ScalarNode:
		if n.Value == "" {
			return "nothing"
		}
		return fmt.Sprintf("%q", n.Value)
	case yaml.SequenceNode:
		return "a list"
	case yaml.MappingNode:
		return "a mapping"
	}
	return "something else"
}

func join(a, b string) string {
	if a == "" {
		return b
	}
	if b == "" {
		return a
	}
	return a + "." + b
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// scalar returns the node's text or reports that a single value was expected.
func (l *loader) scalar(n *yaml.Node, field, what string) (string, bool) {
	if n.Kind != yaml.ScalarNode || n.Tag == "!!null" {
		l.errf(n, field, "expected %s, found %s", what, describe(n))
		return "", false
	}
	v := n.Value
	if n.Style == 0 && strings.HasSuffix(v, placeholderMark) &&
		l.marks[Pos{n.Line, n.Column + utf8.RuneCountInString(v) - 1}] {
		v = strings.TrimSuffix(v, placeholderMark) + "?"
	}
	return strings.TrimSpace(v), true
}

// placeholderMark stands in for a placeholder "?" inside a flow mapping
// while the YAML is parsed; it has the same width so positions hold.
const placeholderMark = "~"

// markFlowPlaceholders lets a placeholder "?" end a plain value inside a
// flow mapping or list ({resistor: 4K7?, between: [B1, P1]}), where YAML
// does not allow it: each such "?" (after a value character and before ",",
// "}" or "]" or the end of the line) is replaced by placeholderMark, and its
// position returned so the loader turns it back into "?". Quoted text and
// comments are left alone.
func markFlowPlaceholders(data []byte) ([]byte, map[Pos]bool) {
	if !strings.Contains(string(data), "?") {
		return data, nil
	}
	out := []byte(string(data))
	var marks map[Pos]bool
	depth := 0
	line, col := 1, 0
	var quote byte
	comment := false
	for i := 0; i < len(out); i++ {
		c := out[i]
		if c == '\n' {
			line, col, comment = line+1, 0, false
			continue
		}
		if c&0xC0 != 0x80 { // count runes, not bytes
			col++
		}
		switch {
		case comment:
		case quote != 0:
			if c == quote {
				quote = 0
			}
		case c == '#' && (i == 0 || out[i-1] == ' ' || out[i-1] == '\t' || out[i-1] == '\n'):
			comment = true
		case c == '\'' || c == '"':
			if i == 0 || strings.ContainsRune(" \t\n{[,:", rune(out[i-1])) {
				quote = c
			}
		case c == '{' || c == '[':
			depth++
		case c == '}' || c == ']':
			depth = max(0, depth-1)
		case c == '?' && depth > 0 && i > 0 && !strings.ContainsRune(" \t{[,:", rune(out[i-1])):
			j := i + 1
			for j < len(out) && (out[j] == ' ' || out[j] == '\t') {
				j++
			}
			if j == len(out) || strings.ContainsRune(",}]\n\r", rune(out[j])) {
				out[i] = placeholderMark[0]
				if marks == nil {
					marks = map[Pos]bool{}
				}
				marks[Pos{line, col}] = true
			}
		}
	}
	return out, marks
}

// markField records the position of a nested field ("T1.power-transformer.
// primary.dcr") so FieldPos finds it; the first position given is kept.
func (p *Part) markField(field string, pos Pos) {
	f := strings.TrimPrefix(field, p.Ref+".")
	if _, ok := p.fields[f]; !ok && p.fields != nil {
		p.fields[f] = pos
	}
}

// value parses a quantity. A trailing "?" marks a placeholder to be
// replaced with the amp's own value; it is recorded on the part.
func (l *loader) value(n *yaml.Node, field string, q units.Quantity, p *Part) (float64, bool) {
	s, ok := l.scalar(n, field, "a "+q.String())
	if !ok {
		return 0, false
	}
	if strings.HasSuffix(s, "?") {
		s = strings.TrimSpace(strings.TrimSuffix(s, "?"))
		if p != nil {
			p.Placeholder = append(p.Placeholder, field)
			p.markField(field, posOf(n))
		}
	}
	v, err := units.Parse(s, q)
	if err != nil {
		l.errf(n, field, "%s", err.Error())
		return 0, false
	}
	return v, true
}

func (l *loader) tolerance(n *yaml.Node, field string) (Tolerance, bool) {
	s, ok := l.scalar(n, field, "a tolerance (5%, J, -10%/+50%)")
	if !ok {
		return Tolerance{}, false
	}
	lo, hi, err := units.ParseTolerance(s)
	if err != nil {
		l.errf(n, field, "%s", err.Error())
		return Tolerance{}, false
	}
	if lo < -0.9 || hi > 5 {
		l.errf(n, field, "tolerance %s is out of range: expected within -90%% and +500%%", s)
		return Tolerance{}, false
	}
	return Tolerance{lo, hi}, true
}

// netList reads a list of net names of the given length (0 = any ≥1).
func (l *loader) netList(n *yaml.Node, field string, want int) ([]string, bool) {
	if n.Kind != yaml.SequenceNode {
		if want == 1 && n.Kind == yaml.ScalarNode {
			s, ok := l.netName(n, field)
			return []string{s}, ok
		}
		l.errf(n, field, "expected a list of %s, like [B1, 0V], found %s", netCount(want), describe(n))
		return nil, false
	}
	if want > 0 && len(n.Content) != want {
		l.errf(n, field, "expected %s, found %d", netCount(want), len(n.Content))
		return nil, false
	}
	if want == 0 && len(n.Content) == 0 {
		l.errf(n, field, "expected at least one net name")
		return nil, false
	}
	out := make([]string, 0, len(n.Content))
	okAll := true
	for _, c := range n.Content {
		s, ok := l.netName(c, field)
		okAll = okAll && ok
		out = append(out, s)
	}
	return out, okAll
}

func netCount(n int) string {
	switch n {
	case 0:
		return "net names"
	case 1:
		return "one net name"
	}
	return fmt.Sprintf("%d net names", n)
}

func (l *loader) netName(n *yaml.Node, field string) (string, bool) {
	s, ok := l.scalar(n, field, "a net name")
	if !ok {
		return "", false
	}
	if s == "" || strings.ContainsAny(s, " \t,:[]{}") {
		l.errf(n, field, "net name %q: expected a name without spaces or punctuation, like B1 or P2", s)
		return "", false
	}
	return s, true
}

// design reads the top level.
func (l *loader) design(d *Design, root *yaml.Node) {
	top := []string{"pinwalk", "title", "mains", "tolerances", "ground", "valve-files", "parts", "notes"}
	if root.Kind != yaml.MappingNode {
		l.errf(root, "file", "expected a design: a mapping of top-level fields (pinwalk: %d, title, mains, parts), found %s", SchemaVersion, describe(root))
		return
	}
	pairs := l.pairs(root, "", top)
	got := map[string]*yaml.Node{}
	for _, kv := range pairs {
		got[kv[0].Value] = kv[1]
	}
	if v, ok := got["pinwalk"]; ok {
		if s, ok := l.scalar(v, "pinwalk", "the schema version"); ok {
			if s != fmt.Sprint(SchemaVersion) {
				l.errf(v, "pinwalk", "schema version %q is not supported: expected %d", s, SchemaVersion)
			}
			d.Version = SchemaVersion
		}
	} else {
		l.errAt(posOf(root), "pinwalk", "missing schema version: expected `pinwalk: %d` as the first line", SchemaVersion)
	}
	if v, ok := got["title"]; ok {
		d.Title, _ = l.scalar(v, "title", "a title")
	}
	if v, ok := got["valve-files"]; ok {
		l.valveFiles(d, v)
	}
	d.Mains = Mains{Volts: 230, Hz: 50, Tol: Tolerance{-0.06, 0.06}}
	if v, ok := got["mains"]; ok {
		l.mains(d, v)
	} else {
		l.errAt(posOf(root), "mains", "missing mains: expected `mains: {volts: 230, hz: 50, tolerance: 6%%}`")
	}
	d.Defaults = Defaults{
		Resistor:     Tolerance{-0.05, 0.05},
		Capacitor:    Tolerance{-0.10, 0.10},
		Electrolytic: Tolerance{-0.20, 0.50},
		Winding:      Tolerance{-0.10, 0.10},
	}
	if v, ok := got["tolerances"]; ok {
		for _, kv := range l.pairs(v, "tolerances", []string{"resistor", "capacitor", "electrolytic", "winding"}) {
			t, ok := l.tolerance(kv[1], "tolerances."+kv[0].Value)
			if !ok {
				continue
			}
			switch kv[0].Value {
			case "resistor":
				d.Defaults.Resistor = t
			case "capacitor":
				d.Defaults.Capacitor = t
			case "electrolytic":
				d.Defaults.Electrolytic = t
			case "winding":
				d.Defaults.Winding = t
			}
		}
	}
	d.Ground = "0V"
	l.groundPos = posOf(root)
	if v, ok := got["ground"]; ok {
		l.groundPos = posOf(v)
		if s, ok := l.netName(v, "ground"); ok {
			d.Ground = s
		}
	}
	if v, ok := got["title"]; ok && d.Title == "" {
		l.errf(v, "title", "expected a title for the amplifier")
	}
	v, ok := got["parts"]
	if !ok {
		l.errAt(posOf(root), "parts", "missing parts: expected a mapping of parts by reference (R1, C1, V1…)")
		return
	}
	if v.Kind != yaml.MappingNode {
		l.errf(v, "parts", "expected a mapping of parts by reference (R1: {resistor: 4K7, between: [B1, P1]}), found %s", describe(v))
		return
	}
	for i := 0; i+1 < len(v.Content); i += 2 {
		k, pv := v.Content[i], v.Content[i+1]
		ref := k.Value
		field := ref
		if prev, dup := d.ByRef[ref]; dup {
			l.errf(k, field, "duplicate reference %s: already used at line %d", ref, prev.Pos.Line)
			continue
		}
		if ref == "" || strings.ContainsAny(ref, " .:,[]{}") {
			l.errf(k, "parts", "reference %q: expected a schematic reference like R1, C12 or V2", ref)
			continue
		}
		p := &Part{Ref: ref, Pos: posOf(k), fields: map[string]Pos{}}
		if l.part(d, p, pv) {
			d.ByRef[ref] = p
			d.Parts = append(d.Parts, p)
		} else {
			d.ByRef[ref] = p // still reserve the reference for duplicate detection
		}
	}
	resolveGroundPending(d)
	for _, p := range d.Parts {
		for _, t := range p.Terminals {
			d.Nets[t.Net] = append(d.Nets[t.Net], NetUse{Ref: p.Ref, Terminal: t.Name, Pos: t.Pos})
		}
	}
}

func (l *loader) mains(d *Design, n *yaml.Node) {
	for _, kv := range l.pairs(n, "mains", []string{"volts", "hz", "tolerance"}) {
		f := "mains." + kv[0].Value
		switch kv[0].Value {
		case "volts":
			if v, ok := l.value(kv[1], f, units.Volts, nil); ok {
				if v < 90 || v > 265 {
					l.errf(kv[1], f, "mains of %s is out of range: expected 90 V to 265 V rms", units.Format(v, units.Volts))
				} else {
					d.Mains.Volts = v
				}
			}
		case "hz":
			if v, ok := l.value(kv[1], f, units.Hertz, nil); ok {
				if v < 45 || v > 65 {
					l.errf(kv[1], f, "mains frequency %s is out of range: expected 50 Hz or 60 Hz", units.Format(v, units.Hertz))
				} else {
					d.Mains.Hz = v
				}
			}
		case "tolerance":
			if t, ok := l.tolerance(kv[1], f); ok {
				if t.Hi > 0.2 || t.Lo < -0.2 {
					l.errf(kv[1], f, "mains tolerance beyond ±20%%: expected the supply's stated limits, such as 6%% or 10%%")
				} else {
					d.Mains.Tol = t
				}
			}
		}
	}
}

// kindOf finds the single kind key of a part mapping.
func (l *loader) kindOf(ref string, n *yaml.Node) (Kind, *yaml.Node, bool) {
	if n.Kind != yaml.MappingNode {
		l.errf(n, ref, "expected a part such as {resistor: 4K7, between: [B1, P1]}, found %s", describe(n))
		return "", nil, false
	}
	var found []Kind
	var val *yaml.Node
	names := make([]string, len(Kinds))
	for i, k := range Kinds {
		names[i] = string(k)
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		key := n.Content[i].Value
		if contains(names, key) {
			found = append(found, Kind(key))
			val = n.Content[i+1]
		}
	}
	switch len(found) {
	case 1:
		return found[0], val, true
	case 0:
		hint := ""
		for i := 0; i+1 < len(n.Content); i += 2 {
			if s := Suggest(n.Content[i].Value, names); len(s) > 0 {
				hint = fmt.Sprintf(" (%q: did you mean %q?)", n.Content[i].Value, s[0])
				break
			}
		}
		l.errf(n, ref, "no part kind given%s: expected one of %s", hint, strings.Join(names, ", "))
	default:
		l.errf(n, ref, "more than one part kind (%s): expected exactly one", kindList(found))
	}
	return "", nil, false
}

func kindList(ks []Kind) string {
	s := make([]string, len(ks))
	for i, k := range ks {
		s[i] = string(k)
	}
	return strings.Join(s, ", ")
}

// fieldsOf lists the fields each kind accepts (besides the kind key).
var fieldsOf = map[Kind][]string{
	Resistor:          {"watts", "tolerance", "build", "between", "note"},
	Capacitor:         {"volts", "kind", "tolerance", "leakage", "between", "note"},
	Choke:             {"dcr", "rated", "tolerance", "between", "note"},
	Pot:               {"setting", "ends", "wiper", "watts", "tolerance", "note"},
	Fuse:              {"slow", "between", "note"},
	MainsInlet:        {"live", "neutral", "earth", "note"},
	BiasSupply:        {"dcr", "between", "mains-fed", "note"},
	DCSupply:          {"dcr", "between", "mains-fed", "note"},
	PowerTransformer:  {"note"},
	OutputTransformer: {"note"},
	Rectifier:         {"anodes", "cathode", "ac", "plus", "minus", "note"},
	Valve:             {"heater", "note", "plate", "grid", "cathode", "screen", "suppressor", "plates", "anode", "A", "B", "T", "P", "D"}, // sections: A, B double triodes; T, P, D triode, pentode and diode sections
}

// CapacitorKinds are the dielectric kinds a capacitor may name.
var CapacitorKinds = []string{"electrolytic", "film", "mica", "ceramic", "paper", "oil"}

// ResistorBuilds are the constructions a resistor may name.
var ResistorBuilds = []string{"carbon-comp", "carbon-film", "metal-film", "metal-oxide", "wirewound"}

func (l *loader) part(d *Design, p *Part, n *yaml.Node) bool {
	kind, kv, ok := l.kindOf(p.Ref, n)
	if !ok {
		return false
	}
	p.Kind = kind
	allowed := append([]string{string(kind)}, fieldsOf[kind]...)
	fields := map[string]*yaml.Node{}
	for _, f := range l.pairs(n, p.Ref, allowed) {
		fields[f[0].Value] = f[1]
		p.fields[f[0].Value] = posOf(f[0])
	}
	before := len(l.probs.Errors())
	field := func(name string) string { return p.Ref + "." + name }
	if nn, ok := fields["note"]; ok {
		p.Note, _ = l.scalar(nn, field("note"), "a note")
	}
	switch kind {
	case Resistor:
		l.resistor(d, p, kv, fields)
	case Capacitor:
		l.capacitor(d, p, kv, fields)
	case Choke:
		if v, ok := l.value(kv, field("choke"), units.Henries, p); ok {
			if v <= 0 || v > 1000 {
				l.errf(kv, field("choke"), "%s is out of range: expected more than 0 H and at most 1000 H", units.Format(v, units.Henries))
			}
			p.Value = v
		}
		p.Tol = d.Defaults.Winding
		l.optValue(fields, "dcr", units.Ohms, p, &p.DCR, 0, 1e5)
		l.optValue(fields, "rated", units.Amps, p, &p.RatedAmps, 0, 100)
		l.optTol(fields, p)
		if _, ok := fields["dcr"]; !ok {
			l.errAt(p.Pos, field("dcr"), "missing dcr: a choke's DC resistance sets the B+ drop; measure it cold or take it from the maker's data (dcr: 110R)")
		}
		l.twoNets(p, fields, "between", [2]string{"a", "b"})
	case Pot:
		if v, ok := l.value(kv, field("pot"), units.Ohms, p); ok {
			if v <= 0 || v > 1e8 {
				l.errf(kv, field("pot"), "%s is out of range: expected more than 0 Ω", units.Format(v, units.Ohms))
			}
			p.Value = v
		}
		p.Tol = Tolerance{-0.2, 0.2}
		p.Setting = 0.5
		if sn, ok := fields["setting"]; ok {
			if s, ok := l.scalar(sn, field("setting"), "a wiper setting (0% to 100% from the first end)"); ok {
				if strings.HasSuffix(s, "?") {
					s = strings.TrimSpace(strings.TrimSuffix(s, "?"))
					p.Placeholder = append(p.Placeholder, field("setting"))
					p.markField(field("setting"), posOf(sn))
				}
				v, err := units.Parse(s, units.Percent)
				if err != nil || v < 0 || v > 100 {
					l.errf(sn, field("setting"), "%q: expected a wiper setting from 0%% to 100%% measured from the first end", s)
				} else {
					p.Setting = v / 100
				}
			}
		}
		l.optValue(fields, "watts", units.Watts, p, &p.Watts, 0, 1000)
		l.optTol(fields, p)
		l.twoNets(p, fields, "ends", [2]string{"a", "b"})
		if wn, ok := fields["wiper"]; ok {
			if s, ok := l.netName(wn, field("wiper")); ok {
				p.Terminals = append(p.Terminals, Terminal{Name: "wiper", Net: s, Pos: posOf(wn)})
			}
		} else {
			l.errAt(p.Pos, field("wiper"), "missing wiper: expected the net the wiper connects to (wiper: NB1)")
		}
	case Fuse:
		if v, ok := l.value(kv, field("fuse"), units.Amps, p); ok {
			if v <= 0 || v > 100 {
				l.errf(kv, field("fuse"), "%s is out of range: expected a fuse rating in amps", units.Format(v, units.Amps))
			}
			p.Value = v
		}
		if sn, ok := fields["slow"]; ok {
			if s, ok := l.scalar(sn, field("slow"), "true or false"); ok && s != "true" && s != "false" {
				l.errf(sn, field("slow"), "expected true or false, found %q", s)
			} else {
				p.Material = map[string]string{"true": "slow", "false": "fast"}[s]
			}
		}
		l.twoNets(p, fields, "between", [2]string{"a", "b"})
	case MainsInlet:
		for _, t := range []string{"live", "neutral", "earth"} {
			if tn, ok := fields[t]; ok {
				if s, ok := l.netName(tn, field(t)); ok {
					p.Terminals = append(p.Terminals, Terminal{Name: t, Net: s, Pos: posOf(tn)})
				}
			} else if t != "earth" { // a two-pin inlet has no earth
				l.errAt(p.Pos, field(t), "missing %s: expected the net the inlet's %s connects to", t, t)
			}
		}
	case BiasSupply, DCSupply:
		if v, ok := l.value(kv, field(string(kind)), units.Volts, p); ok {
			if v == 0 || v < -1000 || v > 1000 {
				l.errf(kv, field(string(kind)), "%s is out of range: expected the supply's DC output, e.g. -52V or 250V", units.Format(v, units.Volts))
			}
			p.Value = v
		}
		p.Tol = Tolerance{-0.1, 0.1}
		// A bias supply is a winding of the power transformer, rectified:
		// it follows the mains and the variac unless it says otherwise
		// (mains-fed: false, a regulated supply); a bench supply
		// (dc-supply) is regulated and does not, unless it says so.
		p.MainsFed = kind == BiasSupply
		if mn, ok := fields["mains-fed"]; ok {
			if s, ok := l.scalar(mn, field("mains-fed"), "true or false"); ok {
				switch s {
				case "true":
					p.MainsFed = true
				case "false":
					p.MainsFed = false
				default:
					l.errf(mn, field("mains-fed"), "expected true (rectified from a winding of the power transformer) or false (a regulated or bench supply), found %q", s)
				}
			}
		}
		l.optValue(fields, "dcr", units.Ohms, p, &p.DCR, 0, 1e7)
		l.twoNets(p, fields, "between", [2]string{"out", "ref"})
	case PowerTransformer:
		l.powerTransformer(p, kv)
	case OutputTransformer:
		l.outputTransformer(p, kv)
	case Rectifier:
		l.rectifier(p, kv, fields)
	case Valve:
		l.valve(d, p, kv, fields)
	}
	return len(l.probs.Errors()) == before
}

func (l *loader) optValue(fields map[string]*yaml.Node, name string, q units.Quantity, p *Part, dst *float64, lo, hi float64) {
	n, ok := fields[name]
	if !ok {
		return
	}
	f := p.Ref + "." + name
	v, ok := l.value(n, f, q, p)
	if !ok {
		return
	}
	if v <= lo || v > hi {
		l.errf(n, f, "%s is out of range: expected more than %s and at most %s", units.Format(v, q), units.Format(lo, q), units.Format(hi, q))
		return
	}
	*dst = v
}

func (l *loader) optTol(fields map[string]*yaml.Node, p *Part) {
	if n, ok := fields["tolerance"]; ok {
		if t, ok := l.tolerance(n, p.Ref+".tolerance"); ok {
			p.Tol = t
		}
	}
}

// twoNets reads a two-net list field into terminals with the given names.
func (l *loader) twoNets(p *Part, fields map[string]*yaml.Node, name string, terms [2]string) {
	n, ok := fields[name]
	f := p.Ref + "." + name
	if !ok {
		l.errAt(p.Pos, f, "missing %s: expected the two nets the part joins, like %s: [B1, P1]", name, name)
		return
	}
	nets, ok := l.netList(n, f, 2)
	if !ok {
		return
	}
	if nets[0] == nets[1] {
		l.errf(n, f, "both ends on net %s: the part is shorted to itself", nets[0])
		return
	}
	for i, t := range terms {
		pos := posOf(n)
		if n.Kind == yaml.SequenceNode {
			pos = posOf(n.Content[i])
		}
		p.Terminals = append(p.Terminals, Terminal{Name: t, Net: nets[i], Pos: pos})
	}
}

func (l *loader) resistor(d *Design, p *Part, kv *yaml.Node, fields map[string]*yaml.Node) {
	f := p.Ref + ".resistor"
	if v, ok := l.value(kv, f, units.Ohms, p); ok {
		if v <= 0 || v > 1e10 {
			l.errf(kv, f, "%s is out of range: expected more than 0 Ω and at most 10 GΩ", units.Format(v, units.Ohms))
		}
		p.Value = v
	}
	p.Tol = d.Defaults.Resistor
	l.optValue(fields, "watts", units.Watts, p, &p.Watts, 0, 1000)
	l.optTol(fields, p)
	if bn, ok := fields["build"]; ok {
		p.Material, _ = l.oneOf(bn, p.Ref+".build", "build", ResistorBuilds)
	}
	l.twoNets(p, fields, "between", [2]string{"a", "b"})
}

// oneOf reads a word that must be one of choices; an unknown word is an
// error with the nearest choice suggested (or all of them listed). The
// word is returned either way, with ok false when it was not a single
// value.
func (l *loader) oneOf(n *yaml.Node, field, what string, choices []string) (string, bool) {
	s, ok := l.scalar(n, field, "a "+what+" ("+strings.Join(choices, ", ")+")")
	if !ok {
		return "", false
	}
	if !contains(choices, s) {
		msg := fmt.Sprintf("unknown %s %q", what, s)
		if dym := didYouMean(s, choices); dym != "" {
			msg += ": " + dym
		} else {
			msg += ": expected one of " + strings.Join(choices, ", ")
		}
		l.errf(n, field, "%s", msg)
	}
	return s, true
}

func (l *loader) capacitor(d *Design, p *Part, kv *yaml.Node, fields map[string]*yaml.Node) {
	f := p.Ref + ".capacitor"
	if v, ok := l.value(kv, f, units.Farads, p); ok {
		if v <= 0 || v > 10 {
			l.errf(kv, f, "%s is out of range: expected more than 0 F", units.Format(v, units.Farads))
		}
		p.Value = v
	}
	p.Material = "film"
	if kn, ok := fields["kind"]; ok {
		if s, ok := l.oneOf(kn, p.Ref+".kind", "kind", CapacitorKinds); ok {
			p.Material = s
		}
	} else if p.Value >= 1e-6 {
		p.Material = "electrolytic"
	}
	if p.Material == "electrolytic" {
		p.Tol = d.Defaults.Electrolytic
	} else {
		p.Tol = d.Defaults.Capacitor
	}
	l.optValue(fields, "volts", units.Volts, p, &p.Volts, 0, 1e5)
	l.optValue(fields, "leakage", units.Ohms, p, &p.Leakage, 0, 1e15)
	l.optTol(fields, p)
	l.twoNets(p, fields, "between", [2]string{"a", "b"})
}

func (l *loader) powerTransformer(p *Part, n *yaml.Node) {
	f := p.Ref + ".power-transformer"
	pt := &PowerTransformerPart{}
	p.PT = pt
	got := map[string]*yaml.Node{}
	for _, kv := range l.pairs(n, f, []string{"primary", "secondaries", "regulation"}) {
		got[kv[0].Value] = kv[1]
	}
	if n.Kind != yaml.MappingNode {
		return
	}
	if pn, ok := got["primary"]; ok {
		pf := f + ".primary"
		for _, kv := range l.pairs(pn, pf, []string{"volts", "dcr", "ends"}) {
			switch kv[0].Value {
			case "volts":
				if v, ok := l.value(kv[1], pf+".volts", units.Volts, p); ok {
					if v < 90 || v > 265 {
						l.errf(kv[1], pf+".volts", "%s is out of range: expected the primary's rated mains, 90 V to 265 V", units.Format(v, units.Volts))
					}
					pt.PrimaryVolts = v
				}
			case "dcr":
				if v, ok := l.value(kv[1], pf+".dcr", units.Ohms, p); ok {
					if v <= 0 || v > 1000 {
						l.errf(kv[1], pf+".dcr", "%s is out of range: expected a primary DC resistance of a few ohms to tens of ohms", units.Format(v, units.Ohms))
					}
					pt.PrimaryDCR = v
				}
			case "ends":
				if nets, ok := l.netList(kv[1], pf+".ends", 2); ok {
					pt.PrimaryEnds = [2]string{nets[0], nets[1]}
					for i, nn := range nets {
						p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("primary.%d", i+1), Net: nn, Pos: posOf(kv[1].Content[i])})
					}
				}
			}
		}
		if pt.PrimaryVolts == 0 {
			l.errf(pn, pf+".volts", "missing primary volts: expected the mains voltage the primary is wound for (volts: 230)")
		}
	} else {
		l.errf(n, f+".primary", "missing primary: expected primary: {volts: 230, dcr: 9R}")
	}
	if rn, ok := got["regulation"]; ok {
		if v, ok := l.value(rn, f+".regulation", units.Percent, p); ok {
			if v <= 0 || v > 50 {
				l.errf(rn, f+".regulation", "%s: expected the no-load to full-load rise, a few percent to 20%%", units.Format(v, units.Percent))
			}
			pt.Regulation = v / 100
		}
	}
	sn, ok := got["secondaries"]
	if !ok {
		l.errf(n, f+".secondaries", "missing secondaries: expected a mapping of windings by name (HT: {volts: 250-0-250, ends: [HTA, HTB], centre: 0V})")
		return
	}
	for _, kv := range l.pairs(sn, f+".secondaries", nil) {
		name := kv[0].Value
		wf := f + ".secondaries." + name
		w := &Winding{Name: name, Pos: posOf(kv[0])}
		got := map[string]*yaml.Node{}
		for _, fkv := range l.pairs(kv[1], wf, []string{"volts", "dcr", "rated", "ends", "centre"}) {
			got[fkv[0].Value] = fkv[1]
		}
		if kv[1].Kind != yaml.MappingNode {
			continue
		}
		if vn, ok := got["volts"]; ok {
			if s, ok := l.scalar(vn, wf+".volts", "the winding's rms volts (6.3 or 250-0-250)"); ok {
				l.windingVolts(vn, wf+".volts", s, w, p)
			}
		} else {
			l.errf(kv[1], wf+".volts", "missing volts: expected the winding's rated rms volts (volts: 6.3, or volts: 250-0-250 for a centre tap)")
		}
		if dn, ok := got["dcr"]; ok {
			if v, ok := l.value(dn, wf+".dcr", units.Ohms, p); ok {
				if v < 0 || v > 1e4 {
					l.errf(dn, wf+".dcr", "%s is out of range", units.Format(v, units.Ohms))
				}
				w.DCR = v
			}
		}
		if rn, ok := got["rated"]; ok {
			if v, ok := l.value(rn, wf+".rated", units.Amps, p); ok {
				if v <= 0 || v > 50 {
					l.errf(rn, wf+".rated", "%s is out of range: expected the winding's current rating", units.Format(v, units.Amps))
				}
				w.RatedAmps = v
			}
		} else {
			l.errf(kv[1], wf+".rated", "missing rated: expected the winding's current rating (rated: 150mA), used for regulation and load checks")
		}
		if en, ok := got["ends"]; ok {
			if nets, ok := l.netList(en, wf+".ends", 2); ok {
				if nets[0] == nets[1] {
					l.errf(en, wf+".ends", "both ends on net %s: the winding is shorted", nets[0])
				}
				w.Ends = [2]string{nets[0], nets[1]}
				for i, nn := range nets {
					p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("%s.%d", name, i+1), Net: nn, Pos: posOf(en.Content[i])})
				}
			}
		} else {
			l.errf(kv[1], wf+".ends", "missing ends: expected the nets of the winding's two ends (ends: [HTA, HTB])")
		}
		if cn, ok := got["centre"]; ok {
			if s, ok := l.netName(cn, wf+".centre"); ok {
				w.Centre = s
				p.Terminals = append(p.Terminals, Terminal{Name: name + ".centre", Net: s, Pos: posOf(cn)})
			}
		} else if w.CentreTap {
			l.errf(kv[1], wf+".centre", "%s is written as a centre-tapped winding but has no centre: expected centre: 0V", name)
		}
		pt.Windings = append(pt.Windings, w)
	}
	if len(pt.Windings) == 0 && sn.Kind == yaml.MappingNode {
		l.errf(sn, f+".secondaries", "no secondaries: expected at least the HT winding")
	}
}

// windingVolts reads "6.3", "6.3V", "250-0-250" or "250-0-250V".
func (l *loader) windingVolts(n *yaml.Node, field, s string, w *Winding, p *Part) {
	if strings.HasSuffix(s, "?") {
		s = strings.TrimSpace(strings.TrimSuffix(s, "?"))
		p.Placeholder = append(p.Placeholder, field)
		p.markField(field, posOf(n))
	}
	if parts := strings.Split(s, "-0-"); len(parts) == 2 {
		a, err1 := units.Parse(strings.TrimSpace(parts[0]), units.Volts)
		b, err2 := units.Parse(strings.TrimSpace(parts[1]), units.Volts)
		if err1 != nil || err2 != nil || a != b {
			l.errf(n, field, "%q: expected a centre-tapped winding written as equal halves, like 250-0-250", s)
			return
		}
		w.Volts, w.CentreTap = a, true
	} else {
		v, err := units.Parse(s, units.Volts)
		if err != nil {
			l.errf(n, field, "%s", err.Error())
			return
		}
		w.Volts = v
	}
	if w.Volts <= 0 || w.Volts > 2000 {
		l.errf(n, field, "%s is out of range: expected a winding of more than 0 V and at most 2 kV rms", units.Format(w.Volts, units.Volts))
	}
}

func (l *loader) outputTransformer(p *Part, n *yaml.Node) {
	f := p.Ref + ".output-transformer"
	ot := &OutputTransformerPart{}
	p.OT = ot
	got := map[string]*yaml.Node{}
	for _, kv := range l.pairs(n, f, []string{"primary", "secondary", "taps"}) {
		got[kv[0].Value] = kv[1]
		p.markField(f+"."+kv[0].Value, posOf(kv[0]))
	}
	if n.Kind != yaml.MappingNode {
		return
	}
	pn, ok := got["primary"]
	if !ok {
		l.errf(n, f+".primary", "missing primary: expected primary: {ends: [B1, OP], dcr: 230R, impedance: 5k} (push-pull: ends: [PA, PB], centre: B1)")
		return
	}
	pf := f + ".primary"
	pg := map[string]*yaml.Node{}
	for _, kv := range l.pairs(pn, pf, []string{"ends", "centre", "dcr", "impedance"}) {
		pg[kv[0].Value] = kv[1]
	}
	if en, ok := pg["ends"]; ok {
		if nets, ok := l.netList(en, pf+".ends", 2); ok {
			if nets[0] == nets[1] {
				l.errf(en, pf+".ends", "both ends on net %s: the primary is shorted", nets[0])
			}
			ot.Ends = [2]string{nets[0], nets[1]}
			for i, nn := range nets {
				p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("primary.%d", i+1), Net: nn, Pos: posOf(en.Content[i])})
			}
		}
	} else if pn.Kind == yaml.MappingNode {
		l.errf(pn, pf+".ends", "missing ends: expected the primary's two ends (single-ended: [B1, OP]; push-pull: [PA, PB] with centre: B1)")
	}
	if cn, ok := pg["centre"]; ok {
		if s, ok := l.netName(cn, pf+".centre"); ok {
			ot.Centre = s
			p.Terminals = append(p.Terminals, Terminal{Name: "primary.centre", Net: s, Pos: posOf(cn)})
		}
	}
	if dn, ok := pg["dcr"]; ok {
		l.otDCR(p, dn, pf+".dcr")
	} else if pn.Kind == yaml.MappingNode {
		l.errf(pn, pf+".dcr", "missing dcr: the primary's DC resistance sets the plate voltage; measure it cold (dcr: 230R; push-pull: the whole primary, dcr: {whole: 200R}, or per half, dcr: {halves: [95R, 105R]})")
	}
	if in, ok := pg["impedance"]; ok {
		if v, ok := l.value(in, pf+".impedance", units.Ohms, p); ok {
			if v <= 0 || v > 1e6 {
				l.errf(in, pf+".impedance", "%s is out of range", units.Format(v, units.Ohms))
			}
			ot.Impedance = v
		}
	} else if pn.Kind == yaml.MappingNode {
		l.errf(pn, pf+".impedance", "missing impedance: expected the primary impedance from the rating (impedance: 5k; plate to plate for push-pull)")
	}
	ot.Load = 8
	if sn, ok := got["secondary"]; ok {
		for _, kv := range l.pairs(sn, f+".secondary", []string{"load", "dcr", "hot", "cold"}) {
			switch kv[0].Value {
			case "hot", "cold":
				l.otSecondaryNet(p, kv[0].Value, kv[1], f+".secondary."+kv[0].Value)
			case "load":
				if v, ok := l.value(kv[1], f+".secondary.load", units.Ohms, p); ok {
					if v <= 0 || v > 1000 {
						l.errf(kv[1], f+".secondary.load", "%s is out of range: expected the speaker load the impedance is rated for (4R, 8R, 16R)", units.Format(v, units.Ohms))
					}
					ot.Load = v
				}
			case "dcr":
				if v, ok := l.value(kv[1], f+".secondary.dcr", units.Ohms, p); ok {
					ot.SecDCR = v
				}
			}
		}
	}
	l.otFinish(p, got["taps"], got["secondary"], f)
}

func (l *loader) rectifier(p *Part, kv *yaml.Node, fields map[string]*yaml.Node) {
	f := p.Ref + ".rectifier"
	r := &RectifierPart{Diode: valves.DefaultDiode()}
	p.Rect = r
	s, ok := l.scalar(kv, f, "a rectifier type (silicon or silicon-bridge)")
	if !ok {
		return
	}
	switch s {
	case "silicon":
	case "silicon-bridge":
		r.Bridge = true
	default:
		msg := fmt.Sprintf("unknown rectifier %q: expected silicon or silicon-bridge", s)
		if vt, ok := valves.Lookup(s); ok {
			msg += fmt.Sprintf("; a %s is a valve: write it as {valve: %s, plates: [HTA, HTB], cathode: B1, heater: [..]}", vt.Name, vt.Name)
		} else if dym := didYouMean(s, []string{"silicon", "silicon-bridge"}); dym != "" {
			msg += "; " + dym
		}
		l.errf(kv, f, "%s", msg)
		return
	}
	if r.Bridge {
		for _, bad := range []string{"anodes", "cathode"} {
			if n, ok := fields[bad]; ok {
				l.errf(n, p.Ref+"."+bad, "a bridge is wired with ac: [HTA, HTB], plus: and minus:, not %s", bad)
			}
		}
		if n, ok := fields["ac"]; ok {
			if nets, ok := l.netList(n, p.Ref+".ac", 2); ok {
				r.AC = [2]string{nets[0], nets[1]}
				for i, nn := range nets {
					p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("ac%d", i+1), Net: nn, Pos: posOf(n.Content[i])})
				}
			}
		} else {
			l.errAt(p.Pos, p.Ref+".ac", "missing ac: expected the two winding ends the bridge takes (ac: [HTA, HTB])")
		}
		for _, t := range []string{"plus", "minus"} {
			if n, ok := fields[t]; ok {
				if s, ok := l.netName(n, p.Ref+"."+t); ok {
					if t == "plus" {
						r.Plus = s
					} else {
						r.Minus = s
					}
					p.Terminals = append(p.Terminals, Terminal{Name: t, Net: s, Pos: posOf(n)})
				}
			} else {
				l.errAt(p.Pos, p.Ref+"."+t, "missing %s: expected the bridge's %s output net", t, t)
			}
		}
		return
	}
	for _, bad := range []string{"ac", "plus", "minus"} {
		if n, ok := fields[bad]; ok {
			l.errf(n, p.Ref+"."+bad, "%s belongs to a bridge (rectifier: silicon-bridge); diodes are wired with anodes: and cathode:", bad)
		}
	}
	if n, ok := fields["anodes"]; ok {
		if nets, ok := l.netList(n, p.Ref+".anodes", 0); ok {
			if len(nets) > 2 {
				l.errf(n, p.Ref+".anodes", "expected one anode (half-wave) or two (full-wave centre tap), found %d", len(nets))
			} else {
				r.Anodes = nets
				for i, nn := range nets {
					pos := posOf(n)
					if n.Kind == yaml.SequenceNode {
						pos = posOf(n.Content[i])
					}
					p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("anode%d", i+1), Net: nn, Pos: pos})
				}
			}
		}
	} else {
		l.errAt(p.Pos, p.Ref+".anodes", "missing anodes: expected the winding ends feeding the diodes (anodes: [HTA, HTB])")
	}
	if n, ok := fields["cathode"]; ok {
		if s, ok := l.netName(n, p.Ref+".cathode"); ok {
			r.Plus = s
			p.Terminals = append(p.Terminals, Terminal{Name: "cathode", Net: s, Pos: posOf(n)})
		}
	} else {
		l.errAt(p.Pos, p.Ref+".cathode", "missing cathode: expected the net the diodes feed, the reservoir (cathode: B1)")
	}
}

func (l *loader) valve(d *Design, p *Part, kv *yaml.Node, fields map[string]*yaml.Node) {
	f := p.Ref + ".valve"
	name, ok := l.scalar(kv, f, "a valve type such as 12AX7")
	if !ok {
		return
	}
	vt, ok := l.lookupValve(name)
	if !ok {
		msg := fmt.Sprintf("unknown valve type %q", name)
		var all []string
		for _, t := range append(valves.All(), l.sideValves...) {
			all = append(all, t.Name)
			all = append(all, t.Aliases...)
		}
		if dym := didYouMean(name, all); dym != "" {
			msg += ": " + dym
		} else {
			msg += ": expected one of " + strings.Join(valves.Names(), ", ") + " (or add it in a valve side file)"
		}
		l.errf(kv, f, "%s", msg)
		return
	}
	vp := &ValvePart{Type: vt, Sections: map[string]map[string]string{}, Unused: map[string]bool{}, PinNets: map[int]string{}}
	p.Valve = vp
	if !vt.Kind.Modelled() && vt.Kind != valves.Multi && vt.Kind != valves.Regulator {
		l.errf(kv, f, "the %s (%s) is not yet modelled: pinwalk cannot put it in the network or predict its pins; "+
			"leave it out of the design file (its pins and ratings: pinwalk valves %s)", vt.Name, kindWords(vt.Kind), vt.Name)
		return
	}
	multi := len(vt.Sections) > 1
	for _, sec := range vt.Sections {
		elecs := vt.Electrodes(sec)
		m := map[string]string{}
		vp.Sections[sec] = m
		var src map[string]*yaml.Node
		var srcPos = p.Pos
		sf := p.Ref
		if multi {
			sf = p.Ref + "." + sec
			sn, ok := fields[sec]
			if !ok {
				l.errAt(p.Pos, sf, "section %s is not wired: expected %s: {%s} or %s: unused (ties it to ground)", sec, sec, electrodeHint(elecs), sec)
				continue
			}
			if sn.Kind == yaml.ScalarNode && sn.Value == "unused" {
				vp.Unused[sec] = true
				for _, e := range elecs {
					m[e] = d.Ground
				}
				continue
			}
			if st := vt.SectionType(sec, l.sideValves); st == nil || !st.Wireable() {
				what := "its unit type is missing"
				if st != nil {
					what = "its " + kindWords(st.Kind) + " are not yet modelled"
				}
				l.errf(sn, sf, "section %s of the %s cannot be wired: %s; write %s: unused (ties it to ground)", sec, vt.Name, what, sec)
				vp.Unused[sec] = true
				continue
			}
			src = map[string]*yaml.Node{}
			for _, ekv := range l.pairs(sn, sf, elecs) {
				src[ekv[0].Value] = ekv[1]
			}
			srcPos = posOf(sn)
		} else {
			src = map[string]*yaml.Node{}
			for k, v := range fields {
				if contains(elecs, k) {
					src[k] = v
				} else if k != "heater" && k != "note" && k != string(Valve) && !contains(sectionNames, k) { // sections: reported below
					l.errf(v, p.Ref+"."+k, "the %s has no %s: expected %s", vt.Name, k, strings.Join(elecs, ", "))
				}
			}
		}
		for _, e := range elecs {
			n, ok := src[e]
			if ok {
				p.fields[join(sec, e)] = posOf(n) // "grid", or "A.grid" on a double triode
			}
			if !ok {
				if e == valves.Grid3 {
					m[e] = "" // filled from the cathode below
					continue
				}
				l.errAt(srcPos, join(sf, e), "%s not wired: every electrode must name a net (%s)", e, electrodeHint(elecs))
				continue
			}
			if e == valves.Plates {
				if nets, ok := l.netList(n, join(sf, e), 0); ok {
					if len(nets) != len(vt.PinsOf(sec, e)) {
						l.errf(n, join(sf, e), "expected %d plate nets, found %d", len(vt.PinsOf(sec, e)), len(nets))
					} else {
						m[e] = strings.Join(nets, ",")
					}
				}
				continue
			}
			if s, ok := l.netName(n, join(sf, e)); ok {
				m[e] = s
			}
		}
		if v, ok := m[valves.Grid3]; ok && v == "" {
			m[valves.Grid3] = m[valves.Cathode]
		}
	}
	if multi {
		for k, v := range fields {
			if k != "heater" && k != "note" && k != string(Valve) && !contains(vt.Sections, k) {
				l.errf(v, p.Ref+"."+k, "the %s is wired by section (%s), not by %s", vt.Name, strings.Join(vt.Sections, ", "), k)
			}
		}
	} else {
		for _, s := range sectionNames {
			if v, ok := fields[s]; ok {
				l.errf(v, p.Ref+"."+s, "the %s has one section: write its electrodes directly (%s)", vt.Name, electrodeHint(vt.Electrodes(vt.Sections[0])))
			}
		}
	}
	l.heater(p, vp, fields)
	// Pins.
	for _, pin := range vt.Pins {
		switch pin.Electrode {
		case valves.Heater:
			continue
		case valves.HeaterCT:
			continue
		case "", "nc":
			continue
		}
		m := vp.Sections[pin.Section]
		if m == nil {
			continue
		}
		net := m[pin.Electrode]
		if pin.Electrode == valves.Plates {
			plates := strings.Split(net, ",")
			idx := 0
			for i, pn := range vt.PinsOf(pin.Section, valves.Plates) {
				if pn == pin.Number {
					idx = i
				}
			}
			if idx < len(plates) {
				net = plates[idx]
			}
		}
		if net != "" {
			vp.PinNets[pin.Number] = net
		}
	}
	heaterPins := vt.PinsOf("", valves.Heater)
	ctPins := vt.PinsOf("", valves.HeaterCT)
	if vp.HeaterNets[0] != "" {
		if len(ctPins) > 0 && vt.Heater.AltVolts > 0 && vp.HeaterVolts == min(vt.Heater.Volts, vt.Heater.AltVolts) {
			for _, pn := range heaterPins {
				vp.PinNets[pn] = vp.HeaterNets[0]
			}
			vp.PinNets[ctPins[0]] = vp.HeaterNets[1]
		} else {
			for i, pn := range heaterPins {
				if i < 2 {
					vp.PinNets[pn] = vp.HeaterNets[i]
				}
			}
		}
	}
	if vt.Heater.DirectlyHeated && vt.Kind == valves.Rectifier { // triodes: checkFilamentCathodes
		if cat := vp.Sections[""][valves.Cathode]; cat != "" && cat != vp.HeaterNets[0] && cat != vp.HeaterNets[1] && vp.HeaterNets[0] != "" {
			l.add(p.FieldPos("cathode"), Error, p.Ref+".cathode", "write heater: [B1, F2] with the B+ net as one filament end",
				"a %s is directly heated: its filament is the cathode, so the cathode net %s must be one of the heater nets %s, %s",
				vt.Name, cat, vp.HeaterNets[0], vp.HeaterNets[1])
		}
	}
	l.rectifierHeaterPins(p, vp)
	nums := make([]int, 0, len(vp.PinNets))
	for n := range vp.PinNets {
		nums = append(nums, n)
	}
	sort.Ints(nums)
	for _, n := range nums {
		p.Terminals = append(p.Terminals, Terminal{Name: fmt.Sprintf("pin %d", n), Net: vp.PinNets[n], Pos: pinPos(p, vt, n)})
	}
}

// pinPos is where a valve pin's net is written: the electrode's field
// ("grid", "A.grid"), the section ("B: unused") or the heater field,
// falling back to the part's reference.
func pinPos(p *Part, vt *valves.Type, num int) Pos {
	for _, pin := range vt.Pins {
		if pin.Number != num {
			continue
		}
		switch pin.Electrode {
		case valves.Heater, valves.HeaterCT:
			return p.FieldPos("heater")
		}
		if pos, ok := p.fields[join(pin.Section, pin.Electrode)]; ok {
			return pos
		}
		if pin.Section != "" {
			return p.FieldPos(pin.Section)
		}
	}
	return p.Pos
}

func electrodeHint(elecs []string) string {
	parts := make([]string, len(elecs))
	for i, e := range elecs {
		parts[i] = e + ": NET"
	}
	return strings.Join(parts, ", ")
}

// heater reads `heater: [H1, H2]` or `heater: {between: [H1, H2], volts: 6.3}`.
func (l *loader) heater(p *Part, vp *ValvePart, fields map[string]*yaml.Node) {
	vt := vp.Type
	hf := p.Ref + ".heater"
	vp.HeaterVolts, vp.HeaterAmps = vt.Heater.Volts, vt.Heater.Amps
	n, ok := fields["heater"]
	if vt.Heater.Volts == 0 && vt.Heater.Amps == 0 {
		// A cold-cathode valve (a gas regulator) has no heater.
		if ok {
			l.errf(n, hf, "the %s is a cold-cathode valve with no heater: leave heater out", vt.Name)
		}
		return
	}
	if !ok {
		l.errAt(p.Pos, hf, "missing heater: expected the heater winding's nets (heater: [H1, H2])")
		return
	}
	var netsNode *yaml.Node
	if n.Kind == yaml.MappingNode {
		for _, kv := range l.pairs(n, hf, []string{"between", "volts"}) {
			switch kv[0].Value {
			case "between":
				netsNode = kv[1]
			case "volts":
				if v, ok := l.value(kv[1], hf+".volts", units.Volts, p); ok {
					switch {
					case near(v, vt.Heater.Volts):
						vp.HeaterVolts, vp.HeaterAmps = vt.Heater.Volts, vt.Heater.Amps
					case vt.Heater.AltVolts > 0 && near(v, vt.Heater.AltVolts):
						vp.HeaterVolts, vp.HeaterAmps = vt.Heater.AltVolts, vt.Heater.AltAmps
					default:
						alt := ""
						if vt.Heater.AltVolts > 0 {
							alt = " or " + units.Format(vt.Heater.AltVolts, units.Volts)
						}
						l.errf(kv[1], hf+".volts", "a %s heater is wired for %s%s, not %s", vt.Name,
							units.Format(vt.Heater.Volts, units.Volts), alt, units.Format(v, units.Volts))
					}
				}
			}
		}
		if netsNode == nil {
			l.errf(n, hf+".between", "missing between: expected the heater nets (between: [H1, H2])")
			return
		}
	} else {
		netsNode = n
	}
	nets, ok := l.netList(netsNode, hf, 2)
	if !ok {
		return
	}
	if nets[0] == nets[1] {
		l.errf(netsNode, hf, "both heater ends on net %s: the heater is shorted out", nets[0])
		return
	}
	vp.HeaterNets = [2]string{nets[0], nets[1]}
	if vt.Heater.AltVolts > 0 && n.Kind != yaml.MappingNode {
		// A double triode on a 6.3 V winding is the usual case: say which wiring was assumed.
		vp.HeaterVolts, vp.HeaterAmps = vt.Heater.AltVolts, vt.Heater.AltAmps
		if vt.Heater.AltVolts > vt.Heater.Volts {
			vp.HeaterVolts, vp.HeaterAmps = vt.Heater.Volts, vt.Heater.Amps
		}
	}
}

func near(a, b float64) bool { return b != 0 && a/b > 0.97 && a/b < 1.03 }

// sectionNames are the section keys a valve part may carry: A and B on
// double triodes, T (triode), P (pentode) and D (diodes) on multi-function
// valves.
var sectionNames = []string{"A", "B", "T", "P", "D"}
