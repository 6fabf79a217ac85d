// INVENTED hostile input for embedcheck's tests: an angle of pi/0
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
rz(pi/0) q[0];
