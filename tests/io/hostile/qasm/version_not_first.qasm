// INVENTED hostile input for embedcheck's tests: the version line after a declaration
include "qelib1.inc";
qreg q[2];
OPENQASM 2.0;
cx q[0], q[1];
