//go:build amd64 && !purego

#include "textflag.h"

// Sign mask that negates the imaginary part of two complex128 values.
DATA negImag<>+0(SB)/8, $0x0000000000000000
DATA negImag<>+8(SB)/8, $0x8000000000000000
DATA negImag<>+16(SB)/8, $0x0000000000000000
DATA negImag<>+24(SB)/8, $0x8000000000000000
GLOBL negImag<>(SB), RODATA|NOPTR, $32

// func pass4AVX(y, x *complex128, quarter, s, h int, w1, w2, w3 *complex128)
TEXT ·pass4AVX(SB), NOSPLIT, $0-64
	MOVQ y+0(FP), DI
	MOVQ x+8(FP), SI
	MOVQ quarter+16(FP), R8
	SHLQ $4, R8                // quarter in bytes
	LEAQ (R8)(R8*2), R9        // 3·quarter
	MOVQ s+24(FP), R10
	SHLQ $4, R10               // s in bytes
	LEAQ (R10)(R10*2), R11     // 3·s
	MOVQ h+32(FP), DX
	MOVQ w1+40(FP), R12
	MOVQ w2+48(FP), R13
	MOVQ w3+56(FP), BX
	VMOVUPD negImag<>(SB), Y15
	TESTQ R12, R12
	JZ unit

ploop:
	VBROADCASTSD 0(R12), Y8
	VBROADCASTSD 8(R12), Y9
	VBROADCASTSD 0(R13), Y10
	VBROADCASTSD 8(R13), Y11
	VBROADCASTSD 0(BX), Y12
	VBROADCASTSD 8(BX), Y13
	XORQ CX, CX

qloop:
	VMOVUPD 0(SI), Y0          // a
	VMOVUPD 0(SI)(R8*1), Y1    // b
	VMOVUPD 0(SI)(R8*2), Y2    // c
	VMOVUPD 0(SI)(R9*1), Y3    // d
	VADDPD Y2, Y0, Y4          // a+c
	VSUBPD Y2, Y0, Y5          // a−c
	VADDPD Y3, Y1, Y6          // b+d
	VSUBPD Y3, Y1, Y7          // b−d
	VADDPD Y6, Y4, Y0          // (a+c)+(b+d)
	VSUBPD Y6, Y4, Y2          // (a+c)−(b+d)
	VPERMILPD $5, Y7, Y7       // (im, re) of b−d
	VADDSUBPD Y7, Y5, Y3       // (a−c) + i(b−d)
	VXORPD Y15, Y7, Y7
	VADDPD Y7, Y5, Y1          // (a−c) − i(b−d)
	VMOVUPD Y0, 0(DI)
	VPERMILPD $5, Y1, Y4
	VMULPD Y8, Y1, Y1
	VMULPD Y9, Y4, Y4
	VADDSUBPD Y4, Y1, Y1
	VPERMILPD $5, Y2, Y5
	VMULPD Y10, Y2, Y2
	VMULPD Y11, Y5, Y5
	VADDSUBPD Y5, Y2, Y2
	VPERMILPD $5, Y3, Y6
	VMULPD Y12, Y3, Y3
	VMULPD Y13, Y6, Y6
	VADDSUBPD Y6, Y3, Y3
	VMOVUPD Y1, 0(DI)(R10*1)
	VMOVUPD Y2, 0(DI)(R10*2)
	VMOVUPD Y3, 0(DI)(R11*1)
	ADDQ $32, SI
	ADDQ $32, DI
	ADDQ $32, CX
	CMPQ CX, R10
	JLT qloop
	ADDQ R11, DI
	ADDQ $16, R12
	ADDQ $16, R13
	ADDQ $16, BX
	DECQ DX
	JNZ ploop
	VZEROUPPER
	RET

unit:
	XORQ CX, CX

uloop:
	VMOVUPD 0(SI), Y0
	VMOVUPD 0(SI)(R8*1), Y1
	VMOVUPD 0(SI)(R8*2), Y2
	VMOVUPD 0(SI)(R9*1), Y3
	VADDPD Y2, Y0, Y4
	VSUBPD Y2, Y0, Y5
	VADDPD Y3, Y1, Y6
	VSUBPD Y3, Y1, Y7
	VADDPD Y6, Y4, Y0
	VSUBPD Y6, Y4, Y2
	VPERMILPD $5, Y7, Y7
	VADDSUBPD Y7, Y5, Y3
	VXORPD Y15, Y7, Y7
	VADDPD Y7, Y5, Y1
	VMOVUPD Y0, 0(DI)
	VMOVUPD Y1, 0(DI)(R10*1)
	VMOVUPD Y2, 0(DI)(R10*2)
	VMOVUPD Y3, 0(DI)(R11*1)
	ADDQ $32, SI
	ADDQ $32, DI
	ADDQ $32, CX
	CMPQ CX, R10
	JLT uloop
	ADDQ R11, DI
	DECQ DX
	JNZ uloop_next
	VZEROUPPER
	RET

uloop_next:
	XORQ CX, CX
	JMP uloop

// CMULW multiplies X by the two twiddles at M (complex128 pairs), as Go's
// complex multiply does: re = xr·wr − xi·wi, im = xi·wr + xr·wi.
#define CMULW(M, X, T1, T2) \
	VMOVDDUP M, T1 \
	VPERMILPD $15, M, T2 \
	VMULPD T1, X, T1 \
	VPERMILPD $5, X, X \
	VMULPD T2, X, T2 \
	VADDSUBPD T2, T1, X

// STORE2 writes out_k (A) and out_{k+1} (B) of lanes p and p+1 to
// y[8p+k], y[8p+k+1] and y[8p+8+k], y[8p+9+k].
#define STORE2(A, B, OFF, T1, T2) \
	VPERM2F128 $0x20, B, A, T1 \
	VPERM2F128 $0x31, B, A, T2 \
	VMOVUPD T1, OFF(DI) \
	VMOVUPD T2, (OFF+128)(DI)

DATA sqrtHalf<>+0(SB)/8, $0x3fe6a09e667f3bcd
GLOBL sqrtHalf<>(SB), RODATA|NOPTR, $8

// func pass8FirstRealAVX(y *complex128, x *float64, e, n int, tw *complex128)
TEXT ·pass8FirstRealAVX(SB), NOSPLIT, $0-40
	MOVQ y+0(FP), DI
	MOVQ x+8(FP), SI
	MOVQ e+16(FP), R8
	SHLQ $3, R8                // eighth in bytes
	LEAQ (R8)(R8*2), R9        // 3E
	LEAQ (R8)(R8*4), R10       // 5E
	LEAQ (R9)(R8*4), R11       // 7E
	MOVQ n+24(FP), CX
	MOVQ tw+32(FP), BX
	VMOVUPD negImag<>(SB), Y15
	VBROADCASTSD sqrtHalf<>(SB), Y14

loop8:
	// t0, t1 = a0 ± a4 ; t2, t3 = a2 ± a6 ; t3 = −i·t3
	VMOVUPD 0(SI), Y0
	VMOVUPD 0(SI)(R8*4), Y1
	VMOVUPD 0(SI)(R8*2), Y2
	VMOVUPD 0(SI)(R9*2), Y3
	VADDPD Y1, Y0, Y4          // t0
	VSUBPD Y1, Y0, Y5          // t1
	VADDPD Y3, Y2, Y6          // t2
	VSUBPD Y3, Y2, Y7          // t3
	VPERMILPD $5, Y7, Y7
	VXORPD Y15, Y7, Y7         // −i·t3
	VADDPD Y6, Y4, Y0          // e0
	VSUBPD Y6, Y4, Y2          // e2
	VADDPD Y7, Y5, Y1          // e1
	VSUBPD Y7, Y5, Y3          // e3
	// u0, u1 = a1 ± a5 ; u2, u3 = a3 ± a7
	VMOVUPD 0(SI)(R8*1), Y4
	VMOVUPD 0(SI)(R10*1), Y5
	VMOVUPD 0(SI)(R9*1), Y6
	VMOVUPD 0(SI)(R11*1), Y7
	VADDPD Y5, Y4, Y8          // u0
	VSUBPD Y5, Y4, Y9          // u1
	VADDPD Y7, Y6, Y10         // u2
	VSUBPD Y7, Y6, Y11         // u3
	VPERMILPD $5, Y11, Y11
	VXORPD Y15, Y11, Y11       // −i·u3
	VADDPD Y10, Y8, Y4         // o0
	VSUBPD Y10, Y8, Y6         // o2
	VADDPD Y11, Y9, Y5         // o1
	VSUBPD Y11, Y9, Y7         // o3
	// o1 = √½·(re+im, im−re)
	VPERMILPD $5, Y5, Y8
	VXORPD Y15, Y8, Y8
	VADDPD Y8, Y5, Y5
	VMULPD Y14, Y5, Y5
	// o2 = (im, −re)
	VPERMILPD $5, Y6, Y6
	VXORPD Y15, Y6, Y6
	// o3 = (√½·(im−re), −√½·(re+im))
	VPERMILPD $5, Y7, Y8
	VADDSUBPD Y7, Y8, Y7
	VMULPD Y14, Y7, Y7
	VXORPD Y15, Y7, Y7
	// out0, out1
	VADDPD Y4, Y0, Y8
	VADDPD Y5, Y1, Y9
	CMULW(0(BX), Y9, Y10, Y11)
	STORE2(Y8, Y9, 0, Y10, Y11)
	// out2, out3
	VADDPD Y6, Y2, Y8
	CMULW(32(BX), Y8, Y10, Y11)
	VADDPD Y7, Y3, Y9
	CMULW(64(BX), Y9, Y10, Y11)
	STORE2(Y8, Y9, 32, Y10, Y11)
	// out4, out5
	VSUBPD Y4, Y0, Y8
	CMULW(96(BX), Y8, Y10, Y11)
	VSUBPD Y5, Y1, Y9
	CMULW(128(BX), Y9, Y10, Y11)
	STORE2(Y8, Y9, 64, Y10, Y11)
	// out6, out7
	VSUBPD Y6, Y2, Y8
	CMULW(160(BX), Y8, Y10, Y11)
	VSUBPD Y7, Y3, Y9
	CMULW(192(BX), Y9, Y10, Y11)
	STORE2(Y8, Y9, 96, Y10, Y11)
	ADDQ $32, SI
	ADDQ $256, DI
	ADDQ $224, BX
	DECQ CX
	JNZ loop8
	VZEROUPPER
	RET

DATA halfHalf<>+0(SB)/8, $0x3fe0000000000000
DATA halfHalf<>+8(SB)/8, $0x3fe0000000000000
DATA halfHalf<>+16(SB)/8, $0x3fe0000000000000
DATA halfHalf<>+24(SB)/8, $0x3fe0000000000000
GLOBL halfHalf<>(SB), RODATA|NOPTR, $32
DATA halfNeg<>+0(SB)/8, $0x3fe0000000000000
DATA halfNeg<>+8(SB)/8, $0xbfe0000000000000
DATA halfNeg<>+16(SB)/8, $0x3fe0000000000000
DATA halfNeg<>+24(SB)/8, $0xbfe0000000000000
GLOBL halfNeg<>(SB), RODATA|NOPTR, $32

// func postPowerAVX2(x *float64, z *complex128, m int, w *complex128)
// Bins k = 1 … m/2 (two per step) of postPower; m/2 even.
TEXT ·postPowerAVX2(SB), NOSPLIT, $0-32
	MOVQ x+0(FP), DI
	MOVQ z+8(FP), SI
	MOVQ m+16(FP), CX
	MOVQ w+24(FP), BX
	LEAQ -1(CX), AX            // m − 1
	MOVQ AX, DX
	SHLQ $4, DX
	ADDQ SI, DX                // &z[m−2] after the −16 below
	SUBQ $16, DX
	LEAQ -8(DI)(AX*8), R8      // &x[m−2]
	ADDQ $16, SI               // &z[1]
	ADDQ $8, DI                // &x[1]
	ADDQ $16, BX               // &w[1]
	SHRQ $2, CX                // (m/2)/2 steps
	VMOVUPD halfHalf<>(SB), Y15
	VMOVUPD halfNeg<>(SB), Y14

ploop:
	VMOVUPD 0(SI), Y0          // z[k], z[k+1]
	VMOVUPD 0(DX), Y1          // z[j−1], z[j]
	VPERM2F128 $0x01, Y1, Y1, Y1 // z[j], z[j−1]
	VADDPD Y1, Y0, Y2          // S
	VSUBPD Y1, Y0, Y3          // D
	VBLENDPD $0x0a, Y3, Y2, Y4 // (S.re, D.im)
	VMULPD Y15, Y4, Y4         // E = (er, ei)
	VPERMILPD $5, Y2, Y5       // (S.im, S.re)
	VPERMILPD $5, Y3, Y6       // (D.im, D.re)
	VBLENDPD $0x0a, Y6, Y5, Y5 // (S.im, D.re)
	VMULPD Y14, Y5, Y5         // O = (or, oi)
	VMOVUPD 0(BX), Y6          // w[k], w[k+1]
	VMOVDDUP Y6, Y7            // (wr, wr)
	VPERMILPD $15, Y6, Y8      // (wi, wi)
	VMULPD Y7, Y5, Y7          // (wr·or, wr·oi)
	VPERMILPD $5, Y5, Y5       // (oi, or)
	VMULPD Y8, Y5, Y8          // (wi·oi, wi·or)
	VADDSUBPD Y8, Y7, Y7       // T = (tr, ti)
	VADDPD Y7, Y4, Y0          // A = (er+tr, ei+ti)
	VSUBPD Y7, Y4, Y1          // (er−tr, ei−ti)
	VMULPD Y0, Y0, Y0
	VMULPD Y1, Y1, Y1
	VHADDPD Y1, Y0, Y2         // x[k], x[j], x[k+1], x[j−1]
	VPERMPD $0x78, Y2, Y2      // x[k], x[k+1], x[j−1], x[j]
	VMOVUPD X2, 0(DI)
	VEXTRACTF128 $1, Y2, 0(R8)
	ADDQ $32, SI
	SUBQ $32, DX
	ADDQ $16, DI
	SUBQ $16, R8
	ADDQ $32, BX
	DECQ CX
	JNZ ploop
	VZEROUPPER
	RET

// func mulAVX(dst, a, b *float64, n int)
// dst[i] = a[i]·b[i] for i < n, n a multiple of 8.
TEXT ·mulAVX(SB), NOSPLIT, $0-32
	MOVQ dst+0(FP), DI
	MOVQ a+8(FP), SI
	MOVQ b+16(FP), DX
	MOVQ n+24(FP), CX
	SHRQ $3, CX

mloop:
	VMOVUPD 0(SI), Y0
	VMOVUPD 32(SI), Y1
	VMULPD 0(DX), Y0, Y0
	VMULPD 32(DX), Y1, Y1
	VMOVUPD Y0, 0(DI)
	VMOVUPD Y1, 32(DI)
	ADDQ $64, SI
	ADDQ $64, DX
	ADDQ $64, DI
	DECQ CX
	JNZ mloop
	VZEROUPPER
	RET
