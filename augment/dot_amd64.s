//go:build !purego

#include "textflag.h"

// func dot4FMA(h, x *[4]*float64, n int, out *[4]float64)
// out[k] = Σ_{i<n} h[k][i]·x[k][i] for k = 0..3; n is a multiple of 8.
// Needs AVX2 and FMA. Each output keeps two 4-lane accumulators (even and
// odd blocks of 4); dot4Lanes in dot.go adds in exactly this order.
TEXT ·dot4FMA(SB), NOSPLIT, $0-32
	MOVQ h+0(FP), AX
	MOVQ 0(AX), R8
	MOVQ 8(AX), R9
	MOVQ 16(AX), R10
	MOVQ 24(AX), R11
	MOVQ x+8(FP), AX
	MOVQ 0(AX), R12
	MOVQ 8(AX), R13
	MOVQ 16(AX), SI
	MOVQ 24(AX), DI
	MOVQ n+16(FP), CX
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7
	XORQ AX, AX

loop:
	CMPQ AX, CX
	JGE  reduce
	VMOVUPD 0(R8)(AX*8), Y8
	VMOVUPD 32(R8)(AX*8), Y9
	VMOVUPD 0(R9)(AX*8), Y10
	VMOVUPD 32(R9)(AX*8), Y11
	VFMADD231PD 0(R12)(AX*8), Y8, Y0
	VFMADD231PD 32(R12)(AX*8), Y9, Y1
	VFMADD231PD 0(R13)(AX*8), Y10, Y2
	VFMADD231PD 32(R13)(AX*8), Y11, Y3
	VMOVUPD 0(R10)(AX*8), Y8
	VMOVUPD 32(R10)(AX*8), Y9
	VMOVUPD 0(R11)(AX*8), Y10
	VMOVUPD 32(R11)(AX*8), Y11
	VFMADD231PD 0(SI)(AX*8), Y8, Y4
	VFMADD231PD 32(SI)(AX*8), Y9, Y5
	VFMADD231PD 0(DI)(AX*8), Y10, Y6
	VFMADD231PD 32(DI)(AX*8), Y11, Y7
	ADDQ $8, AX
	JMP  loop

reduce:
	MOVQ out+24(FP), DX
	VADDPD Y1, Y0, Y0
	VADDPD Y3, Y2, Y2
	VADDPD Y5, Y4, Y4
	VADDPD Y7, Y6, Y6
	VEXTRACTF128 $1, Y0, X1
	VEXTRACTF128 $1, Y2, X3
	VEXTRACTF128 $1, Y4, X5
	VEXTRACTF128 $1, Y6, X7
	VADDPD X1, X0, X0
	VADDPD X3, X2, X2
	VADDPD X5, X4, X4
	VADDPD X7, X6, X6
	VHADDPD X0, X0, X0
	VHADDPD X2, X2, X2
	VHADDPD X4, X4, X4
	VHADDPD X6, X6, X6
	VMOVSD X0, 0(DX)
	VMOVSD X2, 8(DX)
	VMOVSD X4, 16(DX)
	VMOVSD X6, 24(DX)
	VZEROUPPER
	RET

// func dot4sFMA(h, x *float64, xstride, n int, out *[4]float64)
// out[k] = Σ_{i<n} h[i]·x[k·xstride+i] for k = 0..3: one shared row, four
// windows. Same per-output summation order as dot4FMA.
TEXT ·dot4sFMA(SB), NOSPLIT, $0-40
	MOVQ h+0(FP), R8
	MOVQ x+8(FP), R12
	MOVQ xstride+16(FP), BX
	SHLQ $3, BX
	LEAQ 0(R12)(BX*1), R13
	LEAQ 0(R13)(BX*1), SI
	LEAQ 0(SI)(BX*1), DI
	MOVQ n+24(FP), CX
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7
	XORQ AX, AX

sloop:
	CMPQ AX, CX
	JGE  sreduce
	VMOVUPD 0(R8)(AX*8), Y8
	VMOVUPD 32(R8)(AX*8), Y9
	VFMADD231PD 0(R12)(AX*8), Y8, Y0
	VFMADD231PD 32(R12)(AX*8), Y9, Y1
	VFMADD231PD 0(R13)(AX*8), Y8, Y2
	VFMADD231PD 32(R13)(AX*8), Y9, Y3
	VFMADD231PD 0(SI)(AX*8), Y8, Y4
	VFMADD231PD 32(SI)(AX*8), Y9, Y5
	VFMADD231PD 0(DI)(AX*8), Y8, Y6
	VFMADD231PD 32(DI)(AX*8), Y9, Y7
	ADDQ $8, AX
	JMP  sloop

sreduce:
	MOVQ out+32(FP), DX
	VADDPD Y1, Y0, Y0
	VADDPD Y3, Y2, Y2
	VADDPD Y5, Y4, Y4
	VADDPD Y7, Y6, Y6
	VEXTRACTF128 $1, Y0, X1
	VEXTRACTF128 $1, Y2, X3
	VEXTRACTF128 $1, Y4, X5
	VEXTRACTF128 $1, Y6, X7
	VADDPD X1, X0, X0
	VADDPD X3, X2, X2
	VADDPD X5, X4, X4
	VADDPD X7, X6, X6
	VHADDPD X0, X0, X0
	VHADDPD X2, X2, X2
	VHADDPD X4, X4, X4
	VHADDPD X6, X6, X6
	VMOVSD X0, 0(DX)
	VMOVSD X2, 8(DX)
	VMOVSD X4, 16(DX)
	VMOVSD X6, 24(DX)
	VZEROUPPER
	RET

// func dot4pFMA(h, x *[4]*float64, n int, out *[4]float64)
// dot4FMA for x[1] == x[0] and x[3] == x[2] (two rows per window): each
// window block is loaded once and used twice. Same summation order.
TEXT ·dot4pFMA(SB), NOSPLIT, $0-32
	MOVQ h+0(FP), AX
	MOVQ 0(AX), R8
	MOVQ 8(AX), R9
	MOVQ 16(AX), R10
	MOVQ 24(AX), R11
	MOVQ x+8(FP), AX
	MOVQ 0(AX), R12
	MOVQ 16(AX), R13
	MOVQ n+16(FP), CX
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7
	XORQ AX, AX

ploop:
	CMPQ AX, CX
	JGE  preduce
	VMOVUPD 0(R12)(AX*8), Y8
	VMOVUPD 32(R12)(AX*8), Y9
	VMOVUPD 0(R13)(AX*8), Y10
	VMOVUPD 32(R13)(AX*8), Y11
	VFMADD231PD 0(R8)(AX*8), Y8, Y0
	VFMADD231PD 32(R8)(AX*8), Y9, Y1
	VFMADD231PD 0(R9)(AX*8), Y8, Y2
	VFMADD231PD 32(R9)(AX*8), Y9, Y3
	VFMADD231PD 0(R10)(AX*8), Y10, Y4
	VFMADD231PD 32(R10)(AX*8), Y11, Y5
	VFMADD231PD 0(R11)(AX*8), Y10, Y6
	VFMADD231PD 32(R11)(AX*8), Y11, Y7
	ADDQ $8, AX
	JMP  ploop

preduce:
	MOVQ out+24(FP), DX
	VADDPD Y1, Y0, Y0
	VADDPD Y3, Y2, Y2
	VADDPD Y5, Y4, Y4
	VADDPD Y7, Y6, Y6
	VEXTRACTF128 $1, Y0, X1
	VEXTRACTF128 $1, Y2, X3
	VEXTRACTF128 $1, Y4, X5
	VEXTRACTF128 $1, Y6, X7
	VADDPD X1, X0, X0
	VADDPD X3, X2, X2
	VADDPD X5, X4, X4
	VADDPD X7, X6, X6
	VHADDPD X0, X0, X0
	VHADDPD X2, X2, X2
	VHADDPD X4, X4, X4
	VHADDPD X6, X6, X6
	VMOVSD X0, 0(DX)
	VMOVSD X2, 8(DX)
	VMOVSD X4, 16(DX)
	VMOVSD X6, 24(DX)
	VZEROUPPER
	RET

// func cpuid(eax, ecx uint32) (a, b, c, d uint32)
TEXT ·cpuid(SB), NOSPLIT, $0-24
	MOVL eax+0(FP), AX
	MOVL ecx+4(FP), CX
	CPUID
	MOVL AX, a+8(FP)
	MOVL BX, b+12(FP)
	MOVL CX, c+16(FP)
	MOVL DX, d+20(FP)
	RET

// func xgetbv0() uint32
TEXT ·xgetbv0(SB), NOSPLIT, $0-4
	MOVL $0, CX
	BYTE $0x0f; BYTE $0x01; BYTE $0xd0 // XGETBV
	MOVL AX, ret+0(FP)
	RET

// func dot4s32AVX(h, x *float32, xstride, n int, out *[4]float64)
// out[k] = Σ_{i<n} h[i]·x[k·xstride+i] in float32 for k = 0..3; n is a
// multiple of 16. Products and sums are rounded separately (no fused
// multiply-add), each output keeps two 8-lane accumulators (even and odd
// blocks of 8), and the reduction order is that of dot4s32Lanes in dot.go.
TEXT ·dot4s32AVX(SB), NOSPLIT, $0-40
	MOVQ h+0(FP), R8
	MOVQ x+8(FP), R12
	MOVQ xstride+16(FP), BX
	SHLQ $2, BX
	LEAQ 0(R12)(BX*1), R13
	LEAQ 0(R13)(BX*1), SI
	LEAQ 0(SI)(BX*1), DI
	MOVQ n+24(FP), CX
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7
	XORQ AX, AX

floop:
	CMPQ AX, CX
	JGE  freduce
	VMOVUPS 0(R8)(AX*4), Y8
	VMOVUPS 32(R8)(AX*4), Y9
	VMULPS 0(R12)(AX*4), Y8, Y10
	VMULPS 32(R12)(AX*4), Y9, Y11
	VMULPS 0(R13)(AX*4), Y8, Y12
	VMULPS 32(R13)(AX*4), Y9, Y13
	VADDPS Y10, Y0, Y0
	VADDPS Y11, Y1, Y1
	VADDPS Y12, Y2, Y2
	VADDPS Y13, Y3, Y3
	VMULPS 0(SI)(AX*4), Y8, Y10
	VMULPS 32(SI)(AX*4), Y9, Y11
	VMULPS 0(DI)(AX*4), Y8, Y12
	VMULPS 32(DI)(AX*4), Y9, Y13
	VADDPS Y10, Y4, Y4
	VADDPS Y11, Y5, Y5
	VADDPS Y12, Y6, Y6
	VADDPS Y13, Y7, Y7
	ADDQ $16, AX
	JMP  floop

freduce:
	MOVQ out+32(FP), DX
	VADDPS Y1, Y0, Y0
	VADDPS Y3, Y2, Y2
	VADDPS Y5, Y4, Y4
	VADDPS Y7, Y6, Y6
	// Pairwise sums of all four outputs at once: two rounds of horizontal
	// adds give the sums of lanes 0–3 and 4–7, then the halves are added.
	VHADDPS Y2, Y0, Y8
	VHADDPS Y6, Y4, Y9
	VHADDPS Y9, Y8, Y10
	VEXTRACTF128 $1, Y10, X11
	VADDPS X11, X10, X10
	VCVTPS2PD X10, Y10
	VMOVUPD Y10, 0(DX)
	VZEROUPPER
	RET
