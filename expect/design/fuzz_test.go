package design

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzParse feeds arbitrary bytes to the design loader. Seeds: the demo
// designs, the templates and the malformed catalogue. Whatever the input,
// Parse must not panic, every problem must carry a position inside the
// file and a field (never an empty field name for a key that is not a
// name), and a design returned without errors must have every
// part's terminals on known nets.
func FuzzParse(f *testing.F) {
	addDesignSeeds(f)
	f.Add([]byte("pinwalk: 1\nparts: {R1: {resistor: 4K7?, between: [A, A]}}\n"))
	f.Add([]byte("{[]}"))                          // a key that is a list
	f.Add([]byte("pinwalk: 1\n---\npinwalk: 1\n")) // two documents
	f.Fuzz(func(t *testing.T, data []byte) {
		d, probs := Parse("fuzz.yaml", data)
		// YAML counts a lone CR as a line break too.
		lines := strings.Count(string(data), "\n") + strings.Count(string(data), "\r") + 2
		for _, p := range probs {
			if p.Pos.Line < 1 || p.Pos.Line > lines || p.Pos.Col < 1 {
				t.Fatalf("problem outside the file (%d lines): %v", lines, p)
			}
			if p.Field == "" || p.Msg == "" {
				t.Fatalf("problem without field or message: %#v", p)
			}
			if strings.Contains(p.Msg, `unknown field ""`) {
				t.Fatalf("a key that is not a name reported as an empty field name: %v", p)
			}
		}
		if d == nil || len(probs.Errors()) > 0 {
			return
		}
		for _, p := range d.Parts {
			for _, term := range p.Terminals {
				if _, ok := d.Nets[term.Net]; !ok {
					t.Fatalf("%s terminal %s on unknown net %q", p.Ref, term.Name, term.Net)
				}
			}
		}
	})
}

// addDesignSeeds adds the seed corpus both design fuzz targets start
// from: the demo designs, the malformed catalogue and the templates.
func addDesignSeeds(f *testing.F) {
	for _, glob := range []string{"../../testdata/designs/*.yaml", "../../testdata/bad/*.yaml"} {
		files, _ := filepath.Glob(glob)
		for _, p := range files {
			if data, err := os.ReadFile(p); err == nil {
				f.Add(data)
			}
		}
	}
	for _, t := range Templates() {
		f.Add(t.Text)
	}
}
