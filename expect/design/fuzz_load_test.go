package design

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzLoad feeds arbitrary bytes to the design loader through a file on
// disk, as `pinwalk check FILE` does: Load adds what Parse alone does not
// (reading the file, its size limit, valve side files named relative to
// it). Seeds: the demo designs, the malformed catalogue, the templates, a
// design naming a side file, and the two inputs found by fuzzing before (a
// key that is a list, a second document). Whatever the input, Load must
// not panic, and every problem must name the file and carry a line and
// column inside it (a problem in a side file names that file) and a field.
//
//	go test ./expect/design -run '^$' -fuzz FuzzLoad -fuzztime 60s -fuzzminimizetime 1x
//
// (minimising every new input of a design-sized seed takes seconds each:
// with the default the fuzzer spends most of its time there)
func FuzzLoad(f *testing.F) {
	addDesignSeeds(f)
	f.Add([]byte("pinwalk: 1\nvalve-files: [side.yaml]\nparts: {}\n"))
	f.Add([]byte("pinwalk: 1\nvalve-files: [missing.yaml, side.yaml, side.yaml]\n"))
	f.Add([]byte("{[]}"))
	f.Add([]byte("pinwalk: 1\n---\npinwalk: 1\n"))
	side, err := os.ReadFile(filepath.Join("..", "..", "testdata", "sidefile", "bench-qt35.yaml"))
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		path := filepath.Join(dir, "fuzz.yaml")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		sidePath := filepath.Join(dir, "side.yaml")
		if err := os.WriteFile(sidePath, side, 0o644); err != nil {
			t.Fatal(err)
		}
		d, probs := Load(path)
		lines := strings.Count(string(data), "\n") + strings.Count(string(data), "\r") + 2
		for _, p := range probs {
			if p.File == "" {
				t.Fatalf("problem without a file: %#v", p)
			}
			if p.Pos.Line < 1 || p.Pos.Col < 1 {
				t.Fatalf("problem without a line and column: %v", p)
			}
			if p.File == path && p.Pos.Line > lines {
				t.Fatalf("problem past the end of the file (%d lines): %v", lines, p)
			}
			if p.Field == "" || p.Msg == "" {
				t.Fatalf("problem without field or message: %#v", p)
			}
			if !strings.HasPrefix(p.Error(), p.File+":") {
				t.Fatalf("Error() %q does not start with the file", p.Error())
			}
		}
		if d != nil && len(probs.Errors()) == 0 && d.File != path {
			t.Fatalf("design file %q, loaded from %q", d.File, path)
		}
	})
}
