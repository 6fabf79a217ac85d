// INVENTED hostile input for embedcheck's tests: a block comment that never ends
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
/* never closed
h q[0];
