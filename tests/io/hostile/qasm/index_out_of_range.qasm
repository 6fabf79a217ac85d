// INVENTED hostile input for embedcheck's tests: an index past the register
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
cx q[0], q[2];
