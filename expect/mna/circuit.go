// Package mna computes the DC operating point of a circuit of resistors,
// ideal sources and nonlinear devices by modified nodal analysis (MNA) with
// Newton–Raphson iteration.
//
// The formulation follows the standard textbook treatment (J. Vlach and
// K. Singhal, "Computer Methods for Circuit Analysis and Design", chapters on
// modified nodal formulation and Newton–Raphson for nonlinear networks): one
// unknown per non-ground node voltage plus one branch-current unknown per
// ideal voltage source; each nonlinear device is replaced at every iteration
// by its linearised companion (its conductance matrix plus an equivalent
// current source).
//
// A Circuit is built once, then element values may be changed with
// SetResistance and SetSource and the circuit re-solved; Solve allocates
// nothing once the Solution has been sized by a first call. A Circuit is not
// safe for concurrent use: give each goroutine its own.
package mna

import (
	"fmt"
	"math"
)

// shortOhms is the resistance used internally for a resistor set to 0 Ω.
const shortOhms = 1e-6

type elemKind uint8

const (
	kindResistor elemKind = iota + 1
	kindVSource
	kindISource
	kindDevice
)

func (k elemKind) String() string {
	switch k {
	case kindResistor:
		return "resistor"
	case kindVSource:
		return "voltage source"
	case kindISource:
		return "current source"
	case kindDevice:
		return "device"
	}
	return "unknown element"
}

type elemRef struct {
	kind elemKind
	idx  int
}

type resistor struct {
	a, b int
	ohms float64 // as set by the caller
	g    float64 // conductance used in the stamp (S)
}

type vsource struct {
	plus, minus int
	volts       float64
}

type isource struct {
	from, to int
	amps     float64
}

type devSlot struct {
	d    Device
	term []int     // node index per terminal, copied once at AddDevice
	v    []float64 // terminal voltages handed to Eval
	cur  []float64 // terminal currents from Eval
	jac  []float64 // conductance matrix from Eval, row-major n×n
}

// Circuit is a netlist plus the preallocated work space of its solver.
// The zero value is not usable; call New.
type Circuit struct {
	names []string // names[0] is the ground name
	index map[string]int

	elems []elemRef
	res   []resistor
	vs    []vsource
	is    []isource
	devs  []devSlot

	ws workspace
}

// New returns an empty circuit whose ground node is named "0".
func New() *Circuit {
	return &Circuit{names: []string{"0"}, index: map[string]int{}}
}

// SetGround names the ground (reference) node. Call it before adding nodes;
// it panics if other nodes already exist.
func (c *Circuit) SetGround(name string) {
	if len(c.names) > 1 {
		panic("mna: SetGround called after nodes were added")
	}
	c.names[0] = name
}

// Node returns the index of the named node, creating it if needed. The empty
// name and the ground name return 0.
func (c *Circuit) Node(name string) int {
	if name == "" || name == c.names[0] {
		return 0
	}
	if i, ok := c.index[name]; ok {
		return i
	}
	i := len(c.names)
	c.names = append(c.names, name)
	c.index[name] = i
	c.ws.valid = false
	return i
}

// NodeName returns the name of node i (the ground name for 0).
func (c *Circuit) NodeName(i int) string { return c.names[i] }

// NumNodes returns the number of nodes including ground.
func (c *Circuit) NumNodes() int { return len(c.names) }

func (c *Circuit) checkNode(i int) {
	if i < 0 || i >= len(c.names) {
		panic(fmt.Sprintf("mna: node index %d out of range [0,%d)", i, len(c.names)))
	}
}

func (c *Circuit) add(k elemKind, idx int) int {
	c.elems = append(c.elems, elemRef{k, idx})
	c.ws.valid = false
	return len(c.elems) - 1
}

// AddResistor connects a resistor of the given ohms between nodes a and b and
// returns its handle. Ohms follow the rules of SetResistance.
func (c *Circuit) AddResistor(a, b int, ohms float64) int {
	c.checkNode(a)
	c.checkNode(b)
	c.res = append(c.res, resistor{a: a, b: b})
	h := c.add(kindResistor, len(c.res)-1)
	c.SetResistance(h, ohms)
	return h
}

// AddVSource connects an ideal voltage source, V(plus) − V(minus) = volts,
// and returns its handle. Each voltage source adds a branch-current unknown;
// its current is reported in Solution.SourceAmps in the order the voltage
// sources were added (see VSourceIndex).
func (c *Circuit) AddVSource(plus, minus int, volts float64) int {
	c.checkNode(plus)
	c.checkNode(minus)
	c.vs = append(c.vs, vsource{plus: plus, minus: minus, volts: volts})
	return c.add(kindVSource, len(c.vs)-1)
}

// AddISource connects an ideal current source: amps flow from node 'from'
// through the source into node 'to'. It returns the handle.
func (c *Circuit) AddISource(from, to int, amps float64) int {
	c.checkNode(from)
	c.checkNode(to)
	c.is = append(c.is, isource{from: from, to: to, amps: amps})
	return c.add(kindISource, len(c.is)-1)
}

// AddDevice adds a nonlinear device and returns its handle. d.Terminals() is
// read once, here; the device must not change its terminals afterwards.
func (c *Circuit) AddDevice(d Device) int {
	t := d.Terminals()
	term := make([]int, len(t))
	for k, n := range t {
		c.checkNode(n)
		term[k] = n
	}
	nt := len(term)
	c.devs = append(c.devs, devSlot{
		d:    d,
		term: term,
		v:    make([]float64, nt),
		cur:  make([]float64, nt),
		jac:  make([]float64, nt*nt),
	})
	return c.add(kindDevice, len(c.devs)-1)
}

func (c *Circuit) ref(h int, want elemKind, fn string) int {
	if h < 0 || h >= len(c.elems) {
		panic(fmt.Sprintf("mna: %s: handle %d out of range", fn, h))
	}
	e := c.elems[h]
	if want != 0 && e.kind != want {
		panic(fmt.Sprintf("mna: %s: handle %d is a %s, not a %s", fn, h, e.kind, want))
	}
	return e.idx
}

// SetResistance changes the value of resistor h (ohms). math.Inf(1) means an
// open circuit (no conductance); 0 means a short, modelled internally as
// 1e-6 Ω. Negative values are accepted (they are valid in the equations); a
// NaN makes the next Solve return an error. It panics if h is not a resistor.
func (c *Circuit) SetResistance(h int, ohms float64) {
	i := c.ref(h, kindResistor, "SetResistance")
	r := &c.res[i]
	r.ohms = ohms
	switch {
	case math.IsInf(ohms, 1):
		r.g = 0
	case ohms == 0:
		r.g = 1 / shortOhms
	default:
		r.g = 1 / ohms
	}
}

// SetSource changes the value of voltage source h (volts) or current source
// h (amps). It panics if h is neither.
func (c *Circuit) SetSource(h int, value float64) {
	i := c.ref(h, 0, "SetSource")
	switch c.elems[h].kind {
	case kindVSource:
		c.vs[i].volts = value
	case kindISource:
		c.is[i].amps = value
	default:
		panic(fmt.Sprintf("mna: SetSource: handle %d is a %s, not a source", h, c.elems[h].kind))
	}
}

// VSourceIndex returns the position of voltage source h in
// Solution.SourceAmps. It panics if h is not a voltage source.
func (c *Circuit) VSourceIndex(h int) int { return c.ref(h, kindVSource, "VSourceIndex") }

// Conductance returns resistor h's conductance as now stamped (siemens).
func (c *Circuit) Conductance(h int) float64 {
	return c.res[c.ref(h, kindResistor, "Conductance")].g
}

// ResistorNodes returns the two nodes resistor h joins.
func (c *Circuit) ResistorNodes(h int) (a, b int) {
	r := c.res[c.ref(h, kindResistor, "ResistorNodes")]
	return r.a, r.b
}

// ResistorCurrent returns the current through resistor h from its node a to
// its node b (amps) for node voltages v (as in Solution.V). An open resistor
// carries 0. It panics if h is not a resistor.
func (c *Circuit) ResistorCurrent(h int, v []float64) float64 {
	r := c.res[c.ref(h, kindResistor, "ResistorCurrent")]
	return (v[r.a] - v[r.b]) * r.g
}

// DeviceCurrents evaluates device h at node voltages v (as in Solution.V) and
// writes into cur, per terminal in Terminals order, the current flowing into
// the device (amps). cur must have one entry per terminal. It uses the
// circuit's work space, so it must not run concurrently with Solve.
func (c *Circuit) DeviceCurrents(h int, v []float64, cur []float64) {
	s := &c.devs[c.ref(h, kindDevice, "DeviceCurrents")]
	for k, n := range s.term {
		s.v[k] = v[n]
	}
	s.d.Eval(s.v, s.cur, s.jac)
	copy(cur, s.cur)
}
