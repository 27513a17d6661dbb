// Command fitlib refits the model parameters stored in the valve library
// (expect/valves/library.yaml) from its datasheet rows and rewrites the
// "model:" and "perveance_ma:" lines in place.
//
// Usage, from the module root:
//
//	go run ./expect/valves/cmd/fitlib [path/to/library.yaml]
package main

import (
	"fmt"
	"os"

	"pinwalk/expect/valves"
)

func main() {
	path := "expect/valves/library.yaml"
	if len(os.Args) > 1 {
		path = os.Args[1]
	}
	src, err := os.ReadFile(path)
	if err != nil {
		fmt.Fprintln(os.Stderr, "fitlib:", err)
		os.Exit(1)
	}
	out, reps, err := valves.Refit(path, src)
	if err != nil {
		fmt.Fprintln(os.Stderr, "fitlib:", err)
		os.Exit(1)
	}
	for _, r := range reps {
		for _, rf := range r.Rows {
			fmt.Printf("%-8s Va %5.0f Vg2 %4.0f Vg1 %6.2f  Ia %+6.2f %%  gm %+6.2f %%", r.Name, rf.Row.Va, rf.Row.Vg2, rf.Row.Vg1, 100*rf.ErrIa, 100*rf.ErrGm)
			if rf.Row.Ig2 > 0 {
				fmt.Printf("  Ig2 %+6.2f %%", 100*rf.ErrIg2)
			}
			fmt.Println()
		}
	}
	if err := os.WriteFile(path, out, 0o644); err != nil {
		fmt.Fprintln(os.Stderr, "fitlib:", err)
		os.Exit(1)
	}
}
