#include "textflag.h"

DATA posInf<>+0(SB)/4, $0x7f800000
GLOBL posInf<>(SB), RODATA|NOPTR, $4
DATA negInf<>+0(SB)/4, $0xff800000
GLOBL negInf<>(SB), RODATA|NOPTR, $4

// func rangeAVX(blk []float32, nan float32) (lo, hi float32)
//
// Eight values at a time: lo = min(v, lo) and hi = max(v, hi) (VMINPS/VMAXPS answer their
// second source when the first is NaN, so NaN never becomes an extreme), and the lanes holding
// NaN (VCMPPS unordered) are overwritten with nan. len(blk) must be a multiple of 8.
TEXT ·rangeAVX(SB), NOSPLIT, $0-40
	MOVQ         blk_base+0(FP), SI
	MOVQ         blk_len+8(FP), DX
	SHRQ         $3, DX
	VBROADCASTSS posInf<>(SB), Y0
	VBROADCASTSS negInf<>(SB), Y1
	VBROADCASTSS nan+24(FP), Y2

loop:
	TESTQ     DX, DX
	JZ        reduce
	VMOVUPS   (SI), Y3
	VMINPS    Y0, Y3, Y0
	VMAXPS    Y1, Y3, Y1
	VCMPPS    $3, Y3, Y3, Y4
	VMOVMSKPS Y4, AX
	TESTL     AX, AX
	JNZ       fix

next:
	ADDQ $32, SI
	DECQ DX
	JMP  loop

fix:
	VBLENDVPS Y4, Y2, Y3, Y3
	VMOVUPS   Y3, (SI)
	JMP       next

reduce:
	VEXTRACTF128 $1, Y0, X5
	VMINPS       X5, X0, X0
	VMOVHLPS     X0, X0, X5
	VMINPS       X5, X0, X0
	VSHUFPS      $0x55, X0, X0, X5
	VMINPS       X5, X0, X0
	VEXTRACTF128 $1, Y1, X5
	VMAXPS       X5, X1, X1
	VMOVHLPS     X1, X1, X5
	VMAXPS       X5, X1, X1
	VSHUFPS      $0x55, X1, X1, X5
	VMAXPS       X5, X1, X1
	VZEROUPPER
	MOVSS        X0, lo+32(FP)
	MOVSS        X1, hi+36(FP)
	RET
