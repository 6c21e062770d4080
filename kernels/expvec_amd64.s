//go:build amd64 && !purego

#include "textflag.h"

// func expNegativePairs(dst, src *float64, pairs int)
//
// dst[i] = e^(−src[i]) for i < 2·pairs, two entries per step in SSE2, each operation the one
// of expNegativeScalar (expvec.go) in the same order, so the bits agree. Valid for src[i] in
// [0, 708]; the Go caller recomputes any other entry.
TEXT ·expNegativePairs(SB), NOSPLIT, $0-24
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ pairs+16(FP), CX
	TESTQ CX, CX
	JLE  done

loop:
	MOVUPD (SI), X1
	XORPD  expc_sign<>(SB), X1  // x = −s

	MOVAPD X1, X2
	MULPD  expc_log2e<>(SB), X2
	ADDPD  expc_magic<>(SB), X2 // rounded = x·log2e + magic
	MOVAPD X2, X3
	SUBPD  expc_magic<>(SB), X3 // k = rounded − magic
	MOVAPD X3, X4
	MULPD  expc_ln2hi<>(SB), X4 // k·ln2Hi
	MOVAPD X1, X5
	SUBPD  X4, X5               // x − k·ln2Hi
	MULPD  expc_ln2lo<>(SB), X3 // k·ln2Lo
	SUBPD  X3, X5               // r

	MOVAPD X5, X6
	MULPD  X5, X6 // r2
	MOVAPD X6, X7
	MULPD  X6, X7 // r4
	MOVAPD X7, X8
	MULPD  X7, X8 // r8

	// t1 = 1 + r
	MOVUPD expc_one<>(SB), X9
	ADDPD  X5, X9

	// t2 = r2·(0.5 + r·c3); s1 = t1 + t2
	MOVAPD X5, X10
	MULPD  expc_c3<>(SB), X10
	ADDPD  expc_half<>(SB), X10
	MULPD  X6, X10
	ADDPD  X10, X9

	// t3 = r4·((c4 + r·c5) + r2·(c6 + r·c7)); s2 = s1 + t3
	MOVAPD X5, X10
	MULPD  expc_c5<>(SB), X10
	ADDPD  expc_c4<>(SB), X10
	MOVAPD X5, X11
	MULPD  expc_c7<>(SB), X11
	ADDPD  expc_c6<>(SB), X11
	MULPD  X6, X11
	ADDPD  X11, X10
	MULPD  X7, X10
	ADDPD  X10, X9

	// inner = ((c8 + r·c9) + r2·(c10 + r·c11)) + r4·(c12 + r·c13); p = s2 + r8·inner
	MOVAPD X5, X10
	MULPD  expc_c9<>(SB), X10
	ADDPD  expc_c8<>(SB), X10
	MOVAPD X5, X11
	MULPD  expc_c11<>(SB), X11
	ADDPD  expc_c10<>(SB), X11
	MULPD  X6, X11
	ADDPD  X11, X10
	MOVAPD X5, X11
	MULPD  expc_c13<>(SB), X11
	ADDPD  expc_c12<>(SB), X11
	MULPD  X7, X11
	ADDPD  X11, X10
	MULPD  X8, X10
	ADDPD  X10, X9

	// scale = 2ᵏ from rounded's low bits: ((bits + 1023) << 52)
	PADDQ expc_bias<>(SB), X2
	PSLLQ $52, X2
	MULPD X2, X9

	MOVUPD X9, (DI)
	ADDQ   $16, SI
	ADDQ   $16, DI
	DECQ   CX
	JNZ    loop

done:
	RET

// func sqrtScaledPairs(dst, src *float64, pairs int, c float64)
//
// dst[i] = √(c·src[i]) for i < 2·pairs, two entries per SQRTPD; both operations are
// correctly rounded, so the bits are those of math.Sqrt(c * src[i]).
TEXT ·sqrtScaledPairs(SB), NOSPLIT, $0-32
	MOVQ    dst+0(FP), DI
	MOVQ    src+8(FP), SI
	MOVQ    pairs+16(FP), CX
	MOVSD   c+24(FP), X1
	UNPCKLPD X1, X1
	TESTQ   CX, CX
	JLE     sqrtdone

sqrtloop:
	MOVUPD (SI), X0
	MULPD  X1, X0
	SQRTPD X0, X0
	MOVUPD X0, (DI)
	ADDQ   $16, SI
	ADDQ   $16, DI
	DECQ   CX
	JNZ    sqrtloop

sqrtdone:
	RET

// func cpuHasAVX2() bool
//
// Reports whether the processor has AVX2 and the operating system saves the YMM registers:
// CPUID leaf 1 ECX bits 27 (OSXSAVE) and 28 (AVX), XCR0 bits 1 and 2 (XMM and YMM state, read
// by XGETBV), CPUID leaf 7 sub-leaf 0 EBX bit 5 (AVX2); Intel 64 and IA-32 Architectures
// Software Developer's Manual, vol. 1, §14.7.1 (the detection sequence for AVX2).
TEXT ·cpuHasAVX2(SB), NOSPLIT, $0-1
	MOVL $1, AX
	MOVL $0, CX
	CPUID
	MOVL CX, R8
	ANDL $0x18000000, R8
	CMPL R8, $0x18000000
	JNE  no
	MOVL $0, CX
	XGETBV
	ANDL $6, AX
	CMPL AX, $6
	JNE  no
	MOVL $7, AX
	MOVL $0, CX
	CPUID
	ANDL $0x20, BX
	JZ   no
	MOVB $1, ret+0(FP)
	RET

no:
	MOVB $0, ret+0(FP)
	RET

// func expNegativeQuads(dst, src *float64, quads int) (inRange bool)
//
// dst[i] = e^(−src[i]) for i < 4·quads, four entries per step in AVX2: the SSE2 routine of
// expvec_amd64.s on 256-bit registers, operation for operation (no fused multiply-adds), so
// the bits are those of expNegativeScalar. Valid for src[i] in [0, 708]; inRange reports
// whether every src[i] was (ordered comparisons, so a NaN is out of range).
TEXT ·expNegativeQuads(SB), NOSPLIT, $0-25
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ quads+16(FP), CX
	MOVB $1, inRange+24(FP)
	TESTQ CX, CX
	JLE  qdone
	VBROADCASTSD expc_sign<>(SB), Y12
	VBROADCASTSD expc_log2e<>(SB), Y13
	VBROADCASTSD expc_magic<>(SB), Y14
	VPCMPEQQ     Y15, Y15, Y15 // all lanes in range so far

qloop:
	VMOVUPD (SI), Y1
	// Range check: Y15 &= (s ≥ 0) & (s ≤ 708), false for NaN (predicates GE_OQ, LE_OQ).
	VXORPD  Y0, Y0, Y0
	VCMPPD  $0x1d, Y0, Y1, Y10
	VBROADCASTSD expc_max<>(SB), Y0
	VCMPPD  $0x12, Y0, Y1, Y11
	VANDPD  Y11, Y10, Y10
	VANDPD  Y10, Y15, Y15
	VXORPD  Y12, Y1, Y1 // x = −s

	VMULPD Y13, Y1, Y2            // x·log2e
	VADDPD Y14, Y2, Y2            // rounded = x·log2e + magic
	VSUBPD Y14, Y2, Y3            // k = rounded − magic
	VBROADCASTSD expc_ln2hi<>(SB), Y0
	VMULPD Y0, Y3, Y4             // k·ln2Hi
	VSUBPD Y4, Y1, Y5             // x − k·ln2Hi
	VBROADCASTSD expc_ln2lo<>(SB), Y0
	VMULPD Y0, Y3, Y3             // k·ln2Lo
	VSUBPD Y3, Y5, Y5             // r

	VMULPD Y5, Y5, Y6 // r2
	VMULPD Y6, Y6, Y7 // r4
	VMULPD Y7, Y7, Y8 // r8

	// t1 = 1 + r
	VBROADCASTSD expc_one<>(SB), Y9
	VADDPD Y5, Y9, Y9

	// t2 = r2·(0.5 + r·c3); s1 = t1 + t2
	VBROADCASTSD expc_c3<>(SB), Y0
	VMULPD Y0, Y5, Y10
	VBROADCASTSD expc_half<>(SB), Y0
	VADDPD Y0, Y10, Y10
	VMULPD Y6, Y10, Y10
	VADDPD Y10, Y9, Y9

	// t3 = r4·((c4 + r·c5) + r2·(c6 + r·c7)); s2 = s1 + t3
	VBROADCASTSD expc_c5<>(SB), Y0
	VMULPD Y0, Y5, Y10
	VBROADCASTSD expc_c4<>(SB), Y0
	VADDPD Y0, Y10, Y10
	VBROADCASTSD expc_c7<>(SB), Y0
	VMULPD Y0, Y5, Y11
	VBROADCASTSD expc_c6<>(SB), Y0
	VADDPD Y0, Y11, Y11
	VMULPD Y6, Y11, Y11
	VADDPD Y11, Y10, Y10
	VMULPD Y7, Y10, Y10
	VADDPD Y10, Y9, Y9

	// inner = ((c8 + r·c9) + r2·(c10 + r·c11)) + r4·(c12 + r·c13); p = s2 + r8·inner
	VBROADCASTSD expc_c9<>(SB), Y0
	VMULPD Y0, Y5, Y10
	VBROADCASTSD expc_c8<>(SB), Y0
	VADDPD Y0, Y10, Y10
	VBROADCASTSD expc_c11<>(SB), Y0
	VMULPD Y0, Y5, Y11
	VBROADCASTSD expc_c10<>(SB), Y0
	VADDPD Y0, Y11, Y11
	VMULPD Y6, Y11, Y11
	VADDPD Y11, Y10, Y10
	VBROADCASTSD expc_c13<>(SB), Y0
	VMULPD Y0, Y5, Y11
	VBROADCASTSD expc_c12<>(SB), Y0
	VADDPD Y0, Y11, Y11
	VMULPD Y7, Y11, Y11
	VADDPD Y11, Y10, Y10
	VMULPD Y8, Y10, Y10
	VADDPD Y10, Y9, Y9

	// scale = 2ᵏ from rounded's low bits: ((bits + 1023) << 52)
	VBROADCASTSD expc_bias<>(SB), Y0
	VPADDQ Y0, Y2, Y2
	VPSLLQ $52, Y2, Y2
	VMULPD Y2, Y9, Y9

	VMOVUPD Y9, (DI)
	ADDQ    $32, SI
	ADDQ    $32, DI
	DECQ    CX
	JNZ     qloop
	VMOVMSKPD Y15, AX
	VZEROUPPER
	CMPQ    AX, $15
	JEQ     qdone
	MOVB    $0, inRange+24(FP)

qdone:
	RET

// func sqrtScaledQuads(dst, src *float64, quads int, c float64)
//
// dst[i] = √(c·src[i]) for i < 4·quads, four entries per VSQRTPD; both operations are
// correctly rounded, so the bits are those of math.Sqrt(c * src[i]).
TEXT ·sqrtScaledQuads(SB), NOSPLIT, $0-32
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ quads+16(FP), CX
	TESTQ CX, CX
	JLE  sqdone
	VBROADCASTSD c+24(FP), Y1

sqloop:
	VMOVUPD (SI), Y0
	VMULPD  Y1, Y0, Y0
	VSQRTPD Y0, Y0
	VMOVUPD Y0, (DI)
	ADDQ    $32, SI
	ADDQ    $32, DI
	DECQ    CX
	JNZ     sqloop
	VZEROUPPER

sqdone:
	RET

// 708, the top of the range the routines' reduction covers (expNegativeScalar's bound).
DATA expc_max<>+0(SB)/8, $0x4086200000000000
GLOBL expc_max<>(SB), RODATA|NOPTR, $8

DATA expc_log2e<>+0(SB)/8, $0x3ff71547652b82fe
DATA expc_log2e<>+8(SB)/8, $0x3ff71547652b82fe
GLOBL expc_log2e<>(SB), RODATA|NOPTR, $16

DATA expc_magic<>+0(SB)/8, $0x4338000000000000
DATA expc_magic<>+8(SB)/8, $0x4338000000000000
GLOBL expc_magic<>(SB), RODATA|NOPTR, $16

DATA expc_ln2hi<>+0(SB)/8, $0x3fe62e42fee00000
DATA expc_ln2hi<>+8(SB)/8, $0x3fe62e42fee00000
GLOBL expc_ln2hi<>(SB), RODATA|NOPTR, $16

DATA expc_ln2lo<>+0(SB)/8, $0x3dea39ef35793c76
DATA expc_ln2lo<>+8(SB)/8, $0x3dea39ef35793c76
GLOBL expc_ln2lo<>(SB), RODATA|NOPTR, $16

DATA expc_one<>+0(SB)/8, $0x3ff0000000000000
DATA expc_one<>+8(SB)/8, $0x3ff0000000000000
GLOBL expc_one<>(SB), RODATA|NOPTR, $16

DATA expc_half<>+0(SB)/8, $0x3fe0000000000000
DATA expc_half<>+8(SB)/8, $0x3fe0000000000000
GLOBL expc_half<>(SB), RODATA|NOPTR, $16

DATA expc_c3<>+0(SB)/8, $0x3fc5555555555555
DATA expc_c3<>+8(SB)/8, $0x3fc5555555555555
GLOBL expc_c3<>(SB), RODATA|NOPTR, $16

DATA expc_c4<>+0(SB)/8, $0x3fa5555555555555
DATA expc_c4<>+8(SB)/8, $0x3fa5555555555555
GLOBL expc_c4<>(SB), RODATA|NOPTR, $16

DATA expc_c5<>+0(SB)/8, $0x3f81111111111111
DATA expc_c5<>+8(SB)/8, $0x3f81111111111111
GLOBL expc_c5<>(SB), RODATA|NOPTR, $16

DATA expc_c6<>+0(SB)/8, $0x3f56c16c16c16c17
DATA expc_c6<>+8(SB)/8, $0x3f56c16c16c16c17
GLOBL expc_c6<>(SB), RODATA|NOPTR, $16

DATA expc_c7<>+0(SB)/8, $0x3f2a01a01a01a01a
DATA expc_c7<>+8(SB)/8, $0x3f2a01a01a01a01a
GLOBL expc_c7<>(SB), RODATA|NOPTR, $16

DATA expc_c8<>+0(SB)/8, $0x3efa01a01a01a01a
DATA expc_c8<>+8(SB)/8, $0x3efa01a01a01a01a
GLOBL expc_c8<>(SB), RODATA|NOPTR, $16

DATA expc_c9<>+0(SB)/8, $0x3ec71de3a556c734
DATA expc_c9<>+8(SB)/8, $0x3ec71de3a556c734
GLOBL expc_c9<>(SB), RODATA|NOPTR, $16

DATA expc_c10<>+0(SB)/8, $0x3e927e4fb7789f5c
DATA expc_c10<>+8(SB)/8, $0x3e927e4fb7789f5c
GLOBL expc_c10<>(SB), RODATA|NOPTR, $16

DATA expc_c11<>+0(SB)/8, $0x3e5ae64567f544e4
DATA expc_c11<>+8(SB)/8, $0x3e5ae64567f544e4
GLOBL expc_c11<>(SB), RODATA|NOPTR, $16

DATA expc_c12<>+0(SB)/8, $0x3e21eed8eff8d898
DATA expc_c12<>+8(SB)/8, $0x3e21eed8eff8d898
GLOBL expc_c12<>(SB), RODATA|NOPTR, $16

DATA expc_c13<>+0(SB)/8, $0x3de6124613a86d09
DATA expc_c13<>+8(SB)/8, $0x3de6124613a86d09
GLOBL expc_c13<>(SB), RODATA|NOPTR, $16

DATA expc_sign<>+0(SB)/8, $0x8000000000000000
DATA expc_sign<>+8(SB)/8, $0x8000000000000000
GLOBL expc_sign<>(SB), RODATA|NOPTR, $16

DATA expc_bias<>+0(SB)/8, $1023
DATA expc_bias<>+8(SB)/8, $1023
GLOBL expc_bias<>(SB), RODATA|NOPTR, $16
