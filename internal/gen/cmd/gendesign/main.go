// Command gendesign writes a generated design (internal/gen) to stdout,
// for measuring pinwalk on larger amplifiers: n channels, or two channels
// with a chain of n resistors.
//
//	go run ./internal/gen/cmd/gendesign 8 > /tmp/gen8.yaml
//	go run ./internal/gen/cmd/gendesign chain 2000 > /tmp/chain2000.yaml
package main

import (
	"fmt"
	"os"
	"strconv"

	"pinwalk/internal/gen"
)

func main() {
	args := os.Args[1:]
	chain := len(args) == 2 && args[0] == "chain"
	if chain {
		args = args[1:]
	}
	if len(args) != 1 {
		fmt.Fprintln(os.Stderr, "usage: gendesign CHANNELS | gendesign chain RESISTORS")
		os.Exit(2)
	}
	n, err := strconv.Atoi(args[0])
	switch {
	case chain && (err != nil || n < 1 || n > 20000):
		fmt.Fprintf(os.Stderr, "gendesign: %q: expected a number of resistors from 1 to 20000\n", args[0])
		os.Exit(2)
	case chain:
		os.Stdout.Write(gen.Chain(n))
	case err != nil || n < 1 || n > 64:
		fmt.Fprintf(os.Stderr, "gendesign: %q: expected a number of channels from 1 to 64\n", args[0])
		os.Exit(2)
	default:
		os.Stdout.Write(gen.Channels(n))
	}
}
