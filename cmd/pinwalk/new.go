package main

import (
	"fmt"
	"io"
)

func runNew(args []string, stdout, stderr io.Writer) int {
	fmt.Fprintln(stderr, "pinwalk new: not built yet")
	return exitFailure
}
