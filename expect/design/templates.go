package design

import (
	"embed"
	"fmt"
	"io/fs"
	"path"
	"sort"
	"strings"
)

//go:embed templates/*.yaml
var templateFS embed.FS

// Template is a commented design file to start a new design from. Every
// value the user should replace ends in "?", which the loader reports as a
// placeholder note.
type Template struct {
	Name    string // file name without .yaml: "se-cathode"
	Summary string // one line, from the file's first "# NAME: summary" comment
	Text    []byte // the whole file
}

// Templates returns the embedded templates sorted by name.
func Templates() []Template {
	entries, err := fs.ReadDir(templateFS, "templates")
	if err != nil {
		return nil
	}
	var out []Template
	for _, e := range entries {
		if e.IsDir() || !strings.HasSuffix(e.Name(), ".yaml") {
			continue
		}
		data, err := templateFS.ReadFile(path.Join("templates", e.Name()))
		if err != nil {
			continue
		}
		name := strings.TrimSuffix(e.Name(), ".yaml")
		out = append(out, Template{Name: name, Summary: templateSummary(name, data), Text: data})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}

// templateSummary reads the first line, "# NAME: summary".
func templateSummary(name string, data []byte) string {
	first, _, _ := strings.Cut(string(data), "\n")
	first = strings.TrimSpace(strings.TrimPrefix(first, "#"))
	if s, ok := strings.CutPrefix(first, name+":"); ok {
		return strings.TrimSpace(s)
	}
	return first
}

// TemplateNames lists the template names, sorted.
func TemplateNames() []string {
	var out []string
	for _, t := range Templates() {
		out = append(out, t.Name)
	}
	return out
}

// TemplateByName returns the named template. When there is none, the error
// names the closest templates ("did you mean") or lists them all.
func TemplateByName(name string) (Template, error) {
	name = strings.TrimSuffix(name, ".yaml")
	for _, t := range Templates() {
		if t.Name == name {
			return t, nil
		}
	}
	names := TemplateNames()
	if dym := didYouMean(name, names); dym != "" {
		return Template{}, fmt.Errorf("no template %q: %s", name, dym)
	}
	return Template{}, fmt.Errorf("no template %q: expected one of %s", name, strings.Join(names, ", "))
}

// templateFor names the template that shows a complete part of the given
// kind, for hints on missing fields.
var templateFor = map[Kind]string{
	Resistor:          "se-cathode",
	Capacitor:         "se-cathode",
	Choke:             "supply-ct-clc",
	Pot:               "pp-fixed",
	PowerTransformer:  "se-cathode",
	OutputTransformer: "se-cathode",
	Rectifier:         "supply-ct-crc",
	Valve:             "se-cathode",
	Fuse:              "se-cathode",
	MainsInlet:        "se-cathode",
	BiasSupply:        "pp-fixed",
	DCSupply:          "preamp-2stage",
}

// TemplateHint returns a one-line pointer to a template that shows a
// complete part of kind k (and, for a push-pull output transformer or a
// bridge, the template that shows that form), or "".
func TemplateHint(k Kind, pushPull, bridge bool) string {
	name, ok := templateFor[k]
	if !ok {
		return ""
	}
	switch {
	case k == OutputTransformer && pushPull:
		name = "pp-cathode"
	case k == Rectifier && bridge:
		name = "supply-bridge-crc"
	}
	return fmt.Sprintf("see `pinwalk new --list`; the %s template shows a complete %s", name, k)
}
