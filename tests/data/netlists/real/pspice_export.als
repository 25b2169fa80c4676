.ALIASES
V_V1            V1(+=N00112 -=0 )
L_L1            L1(1=N00112 2=N00230 )
C_C1            C1(1=0 2=VOUT )
C_C2            C2(1=0 2=VOUT )
_    _(VOUT=VOUT)
.ENDALIASES
