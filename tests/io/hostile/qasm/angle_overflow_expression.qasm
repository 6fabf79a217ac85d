// INVENTED hostile input for embedcheck's tests: an angle that overflows when computed
OPENQASM 3.0;
include "stdgates.inc";
qubit[2] q;
rz(1e300 * 1e300 - 1) q[0];
