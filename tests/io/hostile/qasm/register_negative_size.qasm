// INVENTED hostile input for embedcheck's tests: a register of size -1
OPENQASM 3.0;
include "stdgates.inc";
qubit[-1] q;
