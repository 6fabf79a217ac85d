// INVENTED hostile input for embedcheck's tests: a gate that does not exist
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
frobnicate q[0], q[1];
