// Command gendesign writes a generated n-channel design (internal/gen) to
// stdout, for measuring `pinwalk diagnose` on larger amplifiers:
//
//	go run ./internal/gen/cmd/gendesign 8 > /tmp/gen8.yaml
package main

import (
	"fmt"
	"os"
	"strconv"

	"pinwalk/internal/gen"
)

func main() {
	if len(os.Args) != 2 {
		fmt.Fprintln(os.Stderr, "usage: gendesign CHANNELS")
		os.Exit(2)
	}
	n, err := strconv.Atoi(os.Args[1])
	if err != nil || n < 1 || n > 64 {
		fmt.Fprintf(os.Stderr, "gendesign: %q: expected a number of channels from 1 to 64\n", os.Args[1])
		os.Exit(2)
	}
	os.Stdout.Write(gen.Channels(n))
}
