// INVENTED hostile input for embedcheck's tests: a secret-looking token where a statement should be
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
hunter2-CANARY-7f3a = $$$;
