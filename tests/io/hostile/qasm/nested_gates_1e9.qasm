// INVENTED hostile input for embedcheck's tests: 1 KB of nested gate definitions that unroll to 10^9 CNOTs
OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
gate g0 a, b { cx a, b; }
gate g1 a, b { g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; g0 a, b; }
gate g2 a, b { g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; g1 a, b; }
gate g3 a, b { g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; g2 a, b; }
gate g4 a, b { g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; g3 a, b; }
gate g5 a, b { g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; g4 a, b; }
gate g6 a, b { g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; g5 a, b; }
gate g7 a, b { g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; g6 a, b; }
gate g8 a, b { g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; g7 a, b; }
gate g9 a, b { g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; g8 a, b; }
g9 q[0], q[1];
