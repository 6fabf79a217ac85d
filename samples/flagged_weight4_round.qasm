// INVENTED demo circuit for embedcheck: one check round of the flagged weight-4 unit.
// Weight-4 X check on d0..d3 through flags f0, f1 and ancilla a0 (8 CNOTs, 3
// measurements), then the weight-2 Z checks Z(d0)Z(d1) and Z(d2)Z(d3) measured on the
// flags (4 CNOTs, 2 measurements): 12 CNOTs and 5 mid-circuit measurements per round,
// as in Chamberland et al., Phys. Rev. X 10, 011022 (2020).
OPENQASM 2.0;
include "qelib1.inc";
qreg d[4];
qreg f[2];
qreg a[1];
creg xcheck[3];
creg zcheck[2];
// X check: cat state on a0, f0, f1, copy X parity onto the data, undo the cat state
reset a[0];
reset f[0];
reset f[1];
h a[0];
cx a[0], f[0];
cx a[0], f[1];
cx f[0], d[0];
cx f[0], d[1];
cx f[1], d[2];
cx f[1], d[3];
cx a[0], f[1];
cx a[0], f[0];
h a[0];
measure a[0] -> xcheck[0];
measure f[0] -> xcheck[1];
measure f[1] -> xcheck[2];
// Z checks on the flags
reset f[0];
reset f[1];
cx d[0], f[0];
cx d[1], f[0];
cx d[2], f[1];
cx d[3], f[1];
measure f[0] -> zcheck[0];
measure f[1] -> zcheck[1];
