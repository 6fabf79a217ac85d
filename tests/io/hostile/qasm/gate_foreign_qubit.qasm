// INVENTED hostile input for embedcheck's tests: a gate body acting on a qubit that is not its argument
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
gate g a { cx a, b; }
g q[0];
