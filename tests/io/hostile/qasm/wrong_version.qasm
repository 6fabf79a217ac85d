// INVENTED hostile input for embedcheck's tests: OpenQASM version 4
OPENQASM 4.0;
qreg q[2];
