package mna

// Device is a nonlinear element with any number of terminals, stamped into
// the modified nodal analysis by Newton–Raphson linearisation.
//
// Terminals returns the node index of each terminal (0 is ground). Eval is
// given the voltage of each terminal (same order) and writes into cur the DC
// current flowing from the circuit INTO the device at each terminal (amps;
// the entries sum to zero for a device with no other connection), and into
// jac the conductance matrix jac[k*n+j] = ∂cur[k]/∂v[j] (siemens), n being
// the number of terminals. cur and jac have lengths n and n*n and are owned
// by the solver; Eval must not keep them. Eval must be pure: the same
// voltages always give the same currents.
type Device interface {
	Terminals() []int
	Eval(v, cur, jac []float64)
}
