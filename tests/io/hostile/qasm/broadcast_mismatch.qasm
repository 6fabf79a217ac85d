// INVENTED hostile input for embedcheck's tests: a broadcast over registers of different sizes
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
qreg r[3];
cx q, r;
