// Package pinwalk holds the demo designs embedded in the binary.
package pinwalk

import "embed"

// Demos are the demo designs (invented amplifiers) from testdata/designs.
//
//go:embed testdata/designs/*.yaml
var Demos embed.FS

// DefaultDemo is the design `pinwalk` opens with no arguments.
const DefaultDemo = "testdata/designs/se-6v6-stereo.yaml"
