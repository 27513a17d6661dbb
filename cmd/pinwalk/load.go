package main

import (
	"fmt"
	"io"
	"io/fs"
	"path"
	"sort"
	"strings"

	"pinwalk"
	"pinwalk/expect/design"
)

// demoNames lists the embedded demo designs by short name.
func demoNames() []string {
	entries, _ := fs.ReadDir(pinwalk.Demos, "testdata/designs")
	var out []string
	for _, e := range entries {
		out = append(out, strings.TrimSuffix(e.Name(), ".yaml"))
	}
	sort.Strings(out)
	return out
}

// loadDesign reads a design named on the command line: a file, "demo"
// (the default demo) or "demo:NAME". Problems are printed to w; the design
// is returned only when it has no errors.
func loadDesign(arg string, w io.Writer) (*design.Design, design.Problems, error) {
	var d *design.Design
	var probs design.Problems
	switch {
	case arg == "" || arg == "demo":
		data, err := pinwalk.Demos.ReadFile(pinwalk.DefaultDemo)
		if err != nil {
			return nil, nil, err
		}
		d, probs = design.Parse("demo:"+strings.TrimSuffix(path.Base(pinwalk.DefaultDemo), ".yaml"), data)
	case strings.HasPrefix(arg, "demo:"):
		name := strings.TrimPrefix(arg, "demo:")
		data, err := pinwalk.Demos.ReadFile("testdata/designs/" + name + ".yaml")
		if err != nil {
			return nil, nil, fmt.Errorf("no demo design %q: expected one of %s", name, strings.Join(demoNames(), ", "))
		}
		d, probs = design.Parse(arg, data)
	default:
		d, probs = design.Load(arg)
	}
	if len(probs.Errors()) > 0 {
		return nil, probs, fmt.Errorf("%d error(s) in %s", len(probs.Errors()), arg)
	}
	return d, probs, nil
}
