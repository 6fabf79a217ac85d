// INVENTED hostile input for embedcheck's tests: a gate on a register never declared
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
cx q[0], r[1];
