// INVENTED hostile input for embedcheck's tests: an angle of 1e400
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
rz(1e400) q[0];
cx q[0], q[1];
