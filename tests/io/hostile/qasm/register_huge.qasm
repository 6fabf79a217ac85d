// INVENTED hostile input for embedcheck's tests: a register of 10^8 qubits and a CNOT across it
OPENQASM 2.0;
include "qelib1.inc";
qreg q[100000000];
cx q[0], q[99999999];
