//go:build amd64 && !purego

#include "textflag.h"

// func melAVX(dst, spec, w *float64, tab *int32, nb int)
// For band b < nb with start s = tab[2b] and c = tab[2b+1] chunks of four
// weights (consecutive in w), dst[b] = (a0+a1)+(a2+a3) where lane i sums
// w[4j+i]·spec[s+4j+i] over j < c in order.
TEXT ·melAVX(SB), NOSPLIT, $0-40
	MOVQ dst+0(FP), DI
	MOVQ spec+8(FP), SI
	MOVQ w+16(FP), DX
	MOVQ tab+24(FP), BX
	MOVQ nb+32(FP), CX

band:
	MOVLQSX 0(BX), AX          // start
	MOVLQSX 4(BX), R8          // chunks
	LEAQ (SI)(AX*8), R9
	VXORPD Y0, Y0, Y0
	TESTQ R8, R8
	JZ done

chunk:
	VMOVUPD 0(DX), Y1
	VMULPD 0(R9), Y1, Y1
	VADDPD Y1, Y0, Y0
	ADDQ $32, DX
	ADDQ $32, R9
	DECQ R8
	JNZ chunk

done:
	VEXTRACTF128 $1, Y0, X2
	VHADDPD X0, X0, X0         // a0+a1
	VHADDPD X2, X2, X2         // a2+a3
	VADDSD X2, X0, X0
	VMOVSD X0, 0(DI)
	ADDQ $8, DI
	ADDQ $8, BX
	DECQ CX
	JNZ band
	VZEROUPPER
	RET
