// INVENTED hostile input for embedcheck's tests: a statement without its semicolon
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
cx q[0], q[1]
