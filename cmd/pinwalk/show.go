package main

import (
	"fmt"
	"io"
)

func runShow(args []string, stdout, stderr io.Writer) int {
	fmt.Fprintln(stderr, "pinwalk show: not built yet")
	return exitFailure
}
