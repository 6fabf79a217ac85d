// INVENTED hostile input for embedcheck's tests: a for loop
OPENQASM 3.0;
include "stdgates.inc";
qubit[2] q;
for int i in [0:1] { x q[i]; }
