package design

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// The catalogue in testdata/bad holds malformed design files, each derived
// from a valid design with one mistake (the first line says which). Beside
// each NAME.yaml, NAME.want lists every error Load must report, in order:
//
//	LINE:COL FIELD: SUBSTRING-OF-THE-MESSAGE
//	  hint: SUBSTRING-OF-THE-HINT      (optional, applies to the line above)
//
// Lines starting with # are comments. The expected texts are what a
// technician needs to fix the file: the place, the field, and what was
// expected instead.

type wantProblem struct {
	line, col int
	field     string
	msg       string
	hint      string
}

var wantLine = regexp.MustCompile(`^(\d+):(\d+) (.+?): (.+)$`)

func readWant(t *testing.T, path string) []wantProblem {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("no expectations: %v", err)
	}
	defer f.Close()
	var out []wantProblem
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		s := sc.Text()
		switch {
		case strings.TrimSpace(s) == "" || strings.HasPrefix(s, "#"):
		case strings.HasPrefix(s, "  hint: "):
			if len(out) == 0 {
				t.Fatalf("%s:%d: hint before any problem", path, n)
			}
			out[len(out)-1].hint = strings.TrimPrefix(s, "  hint: ")
		default:
			m := wantLine.FindStringSubmatch(s)
			if m == nil {
				t.Fatalf("%s:%d: expected LINE:COL FIELD: MESSAGE, found %q", path, n, s)
			}
			line, _ := strconv.Atoi(m[1])
			col, _ := strconv.Atoi(m[2])
			out = append(out, wantProblem{line, col, m[3], m[4], ""})
		}
	}
	if len(out) == 0 {
		t.Fatalf("%s lists no problem", path)
	}
	return out
}

// loadNoPanic runs Load and turns a panic into a test failure.
func loadNoPanic(t *testing.T, path string) (d *Design, ps Problems) {
	t.Helper()
	defer func() {
		if r := recover(); r != nil {
			t.Fatalf("Load(%s) panicked: %v", path, r)
		}
	}()
	return Load(path)
}

func badFiles(t *testing.T) []string {
	t.Helper()
	files, err := filepath.Glob(filepath.Join("..", "..", "testdata", "bad", "*.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	return files
}

func TestBadCatalogue(t *testing.T) {
	files := badFiles(t)
	if len(files) < 30 {
		t.Fatalf("catalogue has %d files, want at least 30", len(files))
	}
	for _, path := range files {
		name := strings.TrimSuffix(filepath.Base(path), ".yaml")
		t.Run(name, func(t *testing.T) {
			want := readWant(t, strings.TrimSuffix(path, ".yaml")+".want")
			_, ps := loadNoPanic(t, path)
			errs := ps.Errors()
			if len(errs) == 0 {
				t.Fatalf("no errors; want %d", len(want))
			}
			for i, w := range want {
				if i >= len(errs) {
					t.Errorf("missing error %d: want %d:%d %s: %s", i+1, w.line, w.col, w.field, w.msg)
					continue
				}
				e := errs[i]
				if e.File != path {
					t.Errorf("error %d names file %q, want %q", i+1, e.File, path)
				}
				if e.Pos.Line != w.line || e.Pos.Col != w.col || e.Field != w.field {
					t.Errorf("error %d at %d:%d field %q, want %d:%d field %q\n  got: %s",
						i+1, e.Pos.Line, e.Pos.Col, e.Field, w.line, w.col, w.field, e.Error())
				}
				if !strings.Contains(e.Msg, w.msg) {
					t.Errorf("error %d message %q does not say %q", i+1, e.Msg, w.msg)
				}
				if w.hint != "" && !strings.Contains(e.Hint, w.hint) {
					t.Errorf("error %d hint %q does not say %q", i+1, e.Hint, w.hint)
				}
				prefix := fmt.Sprintf("%s:%d:%d: error: %s: ", path, e.Pos.Line, e.Pos.Col, e.Field)
				if !strings.HasPrefix(e.Error(), prefix) {
					t.Errorf("Error() = %q, want prefix %q", e.Error(), prefix)
				}
			}
			for _, e := range errs[min(len(want), len(errs)):] {
				t.Errorf("unexpected further error: %s", e.Error())
			}
		})
	}
}

// Every .want has its design file, so that a renamed case cannot go
// silently untested.
func TestBadCatalogueWantFilesHaveDesigns(t *testing.T) {
	wants, _ := filepath.Glob(filepath.Join("..", "..", "testdata", "bad", "*.want"))
	for _, w := range wants {
		if _, err := os.Stat(strings.TrimSuffix(w, ".want") + ".yaml"); err != nil {
			t.Errorf("%s has no design file", w)
		}
	}
}

// The binary case must really be binary: it guards the NUL check.
func TestBadBinaryHoldsNUL(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "bad", "binary.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.ContainsRune(string(data), 0) {
		t.Fatal("binary.yaml holds no NUL byte")
	}
}

func TestLoadTooLarge(t *testing.T) {
	path := filepath.Join(t.TempDir(), "huge.yaml")
	var b strings.Builder
	b.WriteString("pinwalk: 1\ntitle: too large\n")
	for b.Len() <= MaxFileBytes {
		b.WriteString("# padding: a design file is written by hand and is never this long\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	d, ps := loadNoPanic(t, path)
	if d != nil {
		t.Error("a design was returned for an over-size file")
	}
	errs := ps.Errors()
	if len(errs) != 1 {
		t.Fatalf("got %d errors, want 1: %v", len(errs), ps)
	}
	e := errs[0]
	if e.File != path || e.Pos != (Pos{1, 1}) || e.Field != "file" || !strings.Contains(e.Msg, "larger than 256 KiB") {
		t.Errorf("got %s", e.Error())
	}
	// Exactly at the limit is allowed through to the parser (comments only
	// after the header: it parses, and fails later for other reasons).
	at := []byte(b.String()[:MaxFileBytes])
	if _, ps := Parse("at-limit.yaml", at); len(ps.Errors()) > 0 && strings.Contains(ps.Errors()[0].Msg, "larger than") {
		t.Errorf("a file of exactly MaxFileBytes was refused as too large")
	}
}

func TestLoadMissingFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "absent.yaml")
	d, ps := loadNoPanic(t, path)
	if d != nil || len(ps.Errors()) != 1 || ps[0].Field != "file" || ps[0].File != path {
		t.Fatalf("got %v, %v", d, ps)
	}
}

// No prefix of any bad or demo file, cut at a line end or mid-line, makes
// the loader panic (truncated files are a common way for a file to go bad).
func TestLoadPrefixesNeverPanic(t *testing.T) {
	files := badFiles(t)
	demos, _ := filepath.Glob(filepath.Join("..", "..", "testdata", "designs", "*.yaml"))
	for _, path := range append(files, demos...) {
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		for n := 0; n <= len(data); n += 13 {
			func() {
				defer func() {
					if r := recover(); r != nil {
						t.Fatalf("Parse(%s[:%d]) panicked: %v", path, n, r)
					}
				}()
				_, ps := Parse(path, data[:n])
				for _, p := range ps {
					if p.Pos.Line < 1 || p.Pos.Col < 1 {
						t.Errorf("%s[:%d]: problem without a place: %s", path, n, p.Error())
					}
				}
			}()
		}
	}
}
