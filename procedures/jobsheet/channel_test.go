package jobsheet

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"pinwalk/procedures"
)

// A fault-finding session on the stereo demo asks which channel has the
// complaint, by the channels' names, and offers the swap test of the
// matching output valves (V2 and V3; V1 serves both channels, so a swap
// cannot tell it). A scripted technician answers: the session keeps both
// answers and both job sheets show them. The swap test as a method:
// exchanging the corresponding valves of two channels and listening
// whether the fault moves is common practice on the bench.
func TestChannelAndSwapRecorded(t *testing.T) {
	d := loadDesign(t, designA)
	at := time.Date(2025, 3, 1, 10, 0, 0, 0, time.UTC)
	s := procedures.NewSession(d, procedures.FaultFind, 1, at)
	clock := at
	w, err := procedures.Open(d, s, "", procedures.WalkOptions{Samples: 60, Seed: 1, Now: func() time.Time { clock = clock.Add(time.Second); return clock }})
	if err != nil {
		t.Fatal(err)
	}
	c := procedures.NewController(w)
	st, err := c.Do(procedures.Action{Kind: procedures.ActRefresh})
	if err != nil {
		t.Fatal(err)
	}
	var prompts []string
	for i := 0; i < 20 && st.Step != nil && st.Step.ID != procedures.StepSymptoms; i++ {
		st, err = c.Do(procedures.Action{Kind: procedures.ActConfirm})
		if err != nil {
			t.Fatal(err)
		}
	}
	if st.Step == nil || st.Step.ID != procedures.StepSymptoms {
		t.Fatalf("never reached the symptoms step: %+v", st.Step)
	}
	if !strings.Contains(st.Step.Instruction, "swap V2 with V3") || !strings.Contains(st.Step.Instruction, "V1 serves both channels") {
		t.Errorf("the symptoms step does not explain the swap test of V2 and V3: %s", st.Step.Instruction)
	}
	answers := map[string]string{"channel": "right channel", "swap": "stays, hum still on the right"}
	for st.Ask != nil {
		prompts = append(prompts, st.Ask.Prompt)
		text := answers[strings.SplitN(st.Ask.Field, ":", 2)[0]]
		// A wrong answer to the swap test is refused with what is expected.
		if strings.HasPrefix(st.Ask.Field, procedures.FieldSwap) {
			if _, err := c.Do(procedures.Action{Kind: procedures.ActRead, Text: "maybe"}); err == nil || !strings.Contains(err.Error(), "follows") {
				t.Errorf("swap answer %q: %v, want it refused naming follows", "maybe", err)
			}
		}
		if st, err = c.Do(procedures.Action{Kind: procedures.ActRead, Text: text}); err != nil {
			t.Fatal(err)
		}
	}
	all := strings.Join(prompts, " | ")
	for _, want := range []string{"left channel (OT1)", "right channel (OT2)", "or both", "Swap test (V2 with V3)", "follows"} {
		if !strings.Contains(all, want) {
			t.Errorf("the questions %q lack %q", all, want)
		}
	}
	j := w.R.Sess.Job
	if j.Channel != "right channel" {
		t.Errorf("channel recorded as %q", j.Channel)
	}
	if j.Swap == nil || j.Swap.Result != procedures.SwapStays || j.Swap.Valves != "V2/V3" || j.Swap.Said != answers["swap"] {
		t.Fatalf("swap test recorded as %+v", j.Swap)
	}
	// The session file keeps them.
	path := filepath.Join(t.TempDir(), "job.pinwalk.yaml")
	if err := w.R.Sess.Save(path); err != nil {
		t.Fatal(err)
	}
	back, err := procedures.LoadSession(path)
	if err != nil {
		t.Fatal(err)
	}
	if back.Job.Channel != j.Channel || back.Job.Swap == nil || *back.Job.Swap != *j.Swap {
		t.Errorf("after a round trip: channel %q, swap %+v", back.Job.Channel, back.Job.Swap)
	}
	md, html := renderCustomer(t, w.R.Sess, d)
	sh, err := Build(w.R.Sess, Options{Design: d})
	if err != nil {
		t.Fatal(err)
	}
	var bench bytes.Buffer
	if err := sh.Markdown(&bench); err != nil {
		t.Fatal(err)
	}
	for name, text := range map[string]string{"customer md": md, "customer html": html, "bench md": bench.String()} {
		for _, want := range []string{"right channel", "V2 and V3 exchanged between the channels", "stayed on its channel"} {
			if !strings.Contains(text, want) {
				t.Errorf("%s lacks %q", name, want)
			}
		}
	}
	if hits := internalKey.FindAllString(md, -1); len(hits) > 0 {
		t.Errorf("customer sheet shows internal keys %q", hits)
	}
}
