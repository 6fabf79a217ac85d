// INVENTED hostile input for embedcheck's tests: a gate defined through itself
OPENQASM 2.0;
include "qelib1.inc";
qreg q[1];
gate g a { h a; g a; }
g q[0];
