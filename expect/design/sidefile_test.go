package design

import (
	"os"
	"strings"
	"testing"
)

// TestValveSideFile: a design names a valve side file; its types are found
// (and fitted on load, having rows and no model), and a missing side file
// is an error at the valve-files line.
func TestValveSideFile(t *testing.T) {
	d, probs := Load("../../testdata/sidefile/bench-qt35.yaml")
	if len(probs.Errors()) > 0 {
		t.Fatalf("side-file design: %v", probs.Errors())
	}
	v := d.ByRef["V1"].Valve
	if v.Type.Name != "QT-35" {
		t.Fatalf("V1 type %s, want QT-35 from the side file", v.Type.Name)
	}
	if v.Type.Model.KG1 == 0 || v.Type.Model.Mu == 0 {
		t.Errorf("QT-35 was not fitted: %+v", v.Type.Model)
	}
	src := strings.Replace(string(mustRead(t, "../../testdata/sidefile/bench-qt35.yaml")), "[my-valves.yaml]", "[no-such-file.yaml]", 1)
	_, probs = Parse("../../testdata/sidefile/x.yaml", []byte(src))
	errs := probs.Errors()
	if len(errs) == 0 {
		t.Fatal("a missing side file gave no error")
	}
	if errs[0].Field != "valve-files" || errs[0].Pos.Line != 6 || !strings.Contains(errs[0].Msg, "no-such-file.yaml") {
		t.Errorf("missing side file: got %v", errs[0])
	}
}

func mustRead(t *testing.T, path string) []byte {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return data
}
