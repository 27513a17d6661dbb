package ac

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"pinwalk/expect/amp"
	"pinwalk/expect/design"
)

func demoText(t testing.TB, name string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "designs", name+".yaml"))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// withoutLine drops the line of a design text that starts (after spaces)
// with prefix; the test fails if there is none.
func withoutLine(t testing.TB, src, prefix string) string {
	t.Helper()
	var out []string
	found := false
	for _, l := range strings.Split(src, "\n") {
		if strings.HasPrefix(strings.TrimSpace(l), prefix) {
			found = true
			continue
		}
		out = append(out, l)
	}
	if !found {
		t.Fatalf("no line starting %q", prefix)
	}
	return strings.Join(out, "\n")
}

type solved struct {
	m  *amp.Model
	op *amp.OP
	v  *amp.Values
	an *Analyzer
}

func solveText(t testing.TB, src string) solved {
	t.Helper()
	d, probs := design.Parse("test.yaml", []byte(src))
	if len(probs.Errors()) > 0 {
		t.Fatalf("design: %v", probs.Errors())
	}
	m, err := amp.Build(d)
	if err != nil {
		t.Fatal(err)
	}
	v := m.NominalValues()
	var op amp.OP
	if err := amp.NewSolver(m).Solve(amp.Conditions{}, v, false, &op); err != nil {
		t.Fatal(err)
	}
	an, err := New(m)
	if err != nil {
		t.Fatal(err)
	}
	return solved{m, &op, v, an}
}

func find(t testing.TB, pts []Point, id string) Point {
	t.Helper()
	for _, p := range pts {
		if p.ID == id {
			return p
		}
	}
	t.Fatalf("no point %s in %v", id, pts)
	return Point{}
}
