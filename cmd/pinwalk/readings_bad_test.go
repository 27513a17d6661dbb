package main

import (
	"bufio"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBadReadingsFiles runs the catalogue of malformed readings files
// through the readings parser: each gives an error naming the file, the
// line where it applies and what was expected.
func TestBadReadingsFiles(t *testing.T) {
	f, err := os.Open("../../testdata/bad-readings/want.tsv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		parts := strings.Split(sc.Text(), "\t")
		if len(parts) != 3 {
			continue
		}
		name, line, sub := parts[0], parts[1], parts[2]
		t.Run(name, func(t *testing.T) {
			path := filepath.Join("..", "..", "testdata", "bad-readings", name)
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			_, errs := parseReadingsFile(path, data)
			if len(errs) == 0 {
				t.Fatal("no error")
			}
			want := path + ":"
			if line != "" {
				want = path + ":" + line + ":"
			}
			if !strings.HasPrefix(errs[0], want) && !(line == "" && strings.HasPrefix(errs[0], path)) {
				t.Errorf("error %q does not start with %q", errs[0], want)
			}
			if !strings.Contains(errs[0], sub) {
				t.Errorf("error %q does not say %q", errs[0], sub)
			}
		})
	}
}
