// INVENTED hostile input for embedcheck's tests: an include of a file beside it
OPENQASM 2.0;
include "../secret.inc";
qreg q[1];
