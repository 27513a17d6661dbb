package main

import (
	"fmt"
	"io"
)

// ProgressNodes is the network size from which `expect` reports its
// progress on stderr: below it a run takes well under a second.
const ProgressNodes = 500

// progressPrinter returns a bands.Options.Progress hook that writes one
// line to w at every tenth of each stage ("solving 2040 nodes: samples…
// 40 %"), or nil for a network smaller than ProgressNodes.
func progressPrinter(w io.Writer, nodes int) func(stage string, done, total int) {
	if nodes < ProgressNodes {
		return nil
	}
	last := map[string]int{}
	return func(stage string, done, total int) {
		if total <= 0 {
			return
		}
		pct := 100 * done / total / 10 * 10
		if p, ok := last[stage]; ok && p >= pct {
			return
		}
		last[stage] = pct
		fmt.Fprintf(w, "pinwalk: solving %d nodes: %s… %d %%\n", nodes, stage, pct)
	}
}
