* schottky with a package snubber inside its macro-model (invented vendor file for tests)
.subckt SMBR0540 A K
DX A K DCORE
CPKG A K 15p
RPKG A K 10meg
.model DCORE D(Is=2u N=1.05 Rs=0.1 Cjo=120p)
.ends
.model DMBR0540 D(Is=2u N=1.05 Rs=0.1 Cjo=120p)
