//go:build amd64 && !purego

#include "textflag.h"

DATA logK<>+0(SB)/8, $0x000fffffffffffff   // mantissa mask
DATA logK<>+8(SB)/8, $0x3ff0000000000000   // 1.0 (exponent 1023)
DATA logK<>+16(SB)/8, $0x00000000000000ff  // table index mask
DATA logK<>+24(SB)/8, $0x4330000000000000  // 2^52
DATA logK<>+32(SB)/8, $0x43300000000003ff  // 2^52 + 1023
DATA logK<>+40(SB)/8, $0x3fd0000000000000  // 0.25
DATA logK<>+48(SB)/8, $0x3fd5555555555555  // 1/3
DATA logK<>+56(SB)/8, $0x3fe0000000000000  // 0.5
DATA logK<>+64(SB)/8, $0x3fe62e42fefa39ef  // ln 2
DATA logK<>+72(SB)/8, $0x3fdbcb7b1526e50e  // 1/ln 10
DATA logK<>+80(SB)/8, $0x0000000000000001  // 1
DATA logK<>+88(SB)/8, $0x00000000000007fe  // 2046
GLOBL logK<>(SB), RODATA|NOPTR, $96

// func log10RowAVX2(dst *float32, src *float64, n int, eps float64, tab *[2]float64) bool
// dst[i] = float32(log10Fast(src[i] + eps)) for i < n (n a multiple of 4),
// the same operations in the same order as log10Fast's fast path. It
// returns false, with dst partly written, if some src[i] + eps is not a
// positive normal number.
TEXT ·log10RowAVX2(SB), NOSPLIT, $0-41
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ n+16(FP), CX
	SHRQ $2, CX
	VBROADCASTSD eps+24(FP), Y15
	MOVQ tab+32(FP), DX
	VPBROADCASTQ logK<>+0(SB), Y14
	VPBROADCASTQ logK<>+8(SB), Y13
	VPBROADCASTQ logK<>+16(SB), Y12
	VPBROADCASTQ logK<>+24(SB), Y11
	VBROADCASTSD logK<>+32(SB), Y10
	VBROADCASTSD logK<>+40(SB), Y9
	VBROADCASTSD logK<>+48(SB), Y8
	VBROADCASTSD logK<>+56(SB), Y7
	VPBROADCASTQ logK<>+80(SB), Y6
	VPBROADCASTQ logK<>+88(SB), Y5

lloop:
	VMOVUPD 0(SI), Y0
	VADDPD Y15, Y0, Y0         // x = v + eps
	VPSRLQ $52, Y0, Y1         // sign and exponent
	VPSUBQ Y6, Y1, Y2          // e − 1
	VPCMPGTQ Y2, Y5, Y3        // 2046 > e − 1
	VPCMPEQQ Y4, Y4, Y4        // all ones = −1
	VPCMPGTQ Y4, Y2, Y4        // e − 1 > −1
	VPAND Y4, Y3, Y3
	VMOVMSKPD Y3, AX
	CMPQ AX, $15
	JNE bad
	VPSRLQ $44, Y0, Y2         // top 8 mantissa bits
	VPAND Y12, Y2, Y2          // index
	VPADDQ Y2, Y2, Y2          // 2·index (float64 slots)
	VPCMPEQQ Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VGATHERQPD Y3, 0(DX)(Y2*8), Y4   // 1/c
	VPCMPEQQ Y3, Y3, Y3
	VXORPD Y5, Y5, Y5
	VGATHERQPD Y3, 8(DX)(Y2*8), Y5   // −ln(1/c)
	VPAND Y14, Y0, Y0
	VPOR Y13, Y0, Y0           // m in [1, 2)
	VMULPD Y4, Y0, Y0
	VPBROADCASTQ logK<>+8(SB), Y4
	VSUBPD Y4, Y0, Y0          // r = m·(1/c) − 1
	VMULPD Y9, Y0, Y2          // r·0.25
	VSUBPD Y2, Y8, Y2          // 1/3 − r·0.25
	VMULPD Y2, Y0, Y2          // r·(…)
	VSUBPD Y2, Y7, Y2          // 0.5 − r·(…)
	VMULPD Y0, Y0, Y3          // r·r
	VMULPD Y2, Y3, Y3          // r·r·(…)
	VSUBPD Y3, Y0, Y0          // p
	VPOR Y11, Y1, Y1           // 2^52 + e (bits)
	VSUBPD Y10, Y1, Y1         // e − 1023
	VBROADCASTSD logK<>+64(SB), Y2
	VMULPD Y2, Y1, Y1          // (e − 1023)·ln 2
	VADDPD Y5, Y1, Y1          // + t1
	VADDPD Y0, Y1, Y1          // + p
	VBROADCASTSD logK<>+72(SB), Y2
	VMULPD Y2, Y1, Y1
	VCVTPD2PSY Y1, X1
	VMOVUPS X1, 0(DI)
	VPBROADCASTQ logK<>+88(SB), Y5
	ADDQ $32, SI
	ADDQ $16, DI
	DECQ CX
	JNZ lloop
	VZEROUPPER
	MOVB $1, ret+40(FP)
	RET

bad:
	VZEROUPPER
	MOVB $0, ret+40(FP)
	RET
