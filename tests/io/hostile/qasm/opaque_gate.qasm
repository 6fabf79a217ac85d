// INVENTED hostile input for embedcheck's tests: an opaque gate
OPENQASM 2.0;
include "qelib1.inc";
opaque magic a, b;
qreg q[2];
magic q[0], q[1];
