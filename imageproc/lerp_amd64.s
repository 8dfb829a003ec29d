//go:build amd64 && !purego

#include "textflag.h"

// Eight pixels a step, SSE2 only. Per pixel j: f = ((frac_j >> 1) + 2^22)
// >> 23 (lerpWeight), then (p·(256 − f) + q·f + 128) >> 8 by PMADDWL on
// interleaved (p, q) and (256 − f, f) words, packed to int16 (and for
// U8 to bytes with unsigned saturation, which is clip8).
//
// Registers: DI dst, SI p, DX q, CX blocks of 8; X0, X1 the fractions of
// lanes 0–3 and 4–7; X2 inc in every lane; X3 2^22; X4 256 in every
// word; X5 128.
#define SETUP \
	MOVQ  lanes+72(FP), AX \
	MOVOU (AX), X0 \
	MOVOU 16(AX), X1 \
	MOVL  inc+80(FP), AX \
	MOVQ  AX, X2 \
	PSHUFL $0, X2, X2 \
	MOVL  $0x400000, AX \
	MOVQ  AX, X3 \
	PSHUFL $0, X3, X3 \
	MOVL  $0x01000100, AX \
	MOVQ  AX, X4 \
	PSHUFL $0, X4, X4 \
	MOVL  $128, AX \
	MOVQ  AX, X5 \
	PSHUFL $0, X5, X5 \
	MOVQ  dst_base+0(FP), DI \
	MOVQ  dst_len+8(FP), CX \
	MOVQ  p_base+24(FP), SI \
	MOVQ  q_base+48(FP), DX \
	SHRQ  $3, CX

// BLOCK leaves the eight results as int16 in X11.
#define BLOCK \
	MOVO      X0, X6 \
	PSRLL     $1, X6 \
	PADDL     X3, X6 \
	PSRLL     $23, X6 \
	MOVO      X1, X7 \
	PSRLL     $1, X7 \
	PADDL     X3, X7 \
	PSRLL     $23, X7 \
	PACKSSLW  X7, X6 \
	MOVO      X4, X7 \
	PSUBW     X6, X7 \
	MOVO      X7, X8 \
	PUNPCKLWL X6, X8 \
	PUNPCKHWL X6, X7 \
	MOVOU     (SI), X9 \
	MOVOU     (DX), X10 \
	MOVO      X9, X11 \
	PUNPCKLWL X10, X11 \
	PUNPCKHWL X10, X9 \
	PMADDWL   X8, X11 \
	PMADDWL   X7, X9 \
	PADDL     X5, X11 \
	PADDL     X5, X9 \
	PSRAL     $8, X11 \
	PSRAL     $8, X9 \
	PACKSSLW  X9, X11 \
	PADDL     X2, X0 \
	PADDL     X2, X1 \
	ADDQ      $16, SI \
	ADDQ      $16, DX

// func lerpI16SIMD(dst, p, q []int16, lanes *[8]uint32, inc uint32)
TEXT ·lerpI16SIMD(SB), NOSPLIT, $0-84
	SETUP
	TESTQ CX, CX
	JZ    doneI16

loopI16:
	BLOCK
	MOVOU X11, (DI)
	ADDQ  $16, DI
	DECQ  CX
	JNZ   loopI16

doneI16:
	RET

// func lerpU8SIMD(dst []uint8, p, q []int16, lanes *[8]uint32, inc uint32)
TEXT ·lerpU8SIMD(SB), NOSPLIT, $0-84
	SETUP
	TESTQ CX, CX
	JZ    doneU8

loopU8:
	BLOCK
	PACKUSWB X11, X11
	MOVQ     X11, (DI)
	ADDQ     $8, DI
	DECQ     CX
	JNZ      loopU8

doneU8:
	RET

// LERP8 interpolates eight int16 pairs at (P) and (Q) with the weight
// words in WLO (lanes 0–3) and WHI (4–7) and stores eight clipped bytes
// at (OUT); it uses X9–X11.
#define LERP8(P, Q, OUT) \
	MOVOU     (P), X9 \
	MOVOU     (Q), X10 \
	MOVO      X9, X11 \
	PUNPCKLWL X10, X11 \
	PUNPCKHWL X10, X9 \
	PMADDWL   X8, X11 \
	PMADDWL   X7, X9 \
	PADDL     X5, X11 \
	PADDL     X5, X9 \
	PSRAL     $8, X11 \
	PSRAL     $8, X9 \
	PACKSSLW  X9, X11 \
	PACKUSWB  X11, X11 \
	MOVQ      X11, (OUT)

// WEIGHTS leaves the (256 − f, f) words of lanes 0–3 in X8, 4–7 in X7.
#define WEIGHTS \
	MOVO      X0, X6 \
	PSRLL     $1, X6 \
	PADDL     X3, X6 \
	PSRLL     $23, X6 \
	MOVO      X1, X7 \
	PSRLL     $1, X7 \
	PADDL     X3, X7 \
	PSRLL     $23, X7 \
	PACKSSLW  X7, X6 \
	MOVO      X4, X7 \
	PSUBW     X6, X7 \
	MOVO      X7, X8 \
	PUNPCKLWL X6, X8 \
	PUNPCKHWL X6, X7

// func lerp2U8SIMD(a, b []uint8, pi, qi, pg, qg *int16, frac uint32, st *lerpSteps)
//
// DI a, R8 b, SI pi, DX qi, R9 pg, R10 qg, CX whole blocks, R11 the
// pixels past them, AX st (lanes at 0, inc at 32, step at 36).
TEXT ·lerp2U8SIMD(SB), NOSPLIT, $0-96
	MOVQ   st+88(FP), AX
	MOVL   frac+80(FP), BX
	MOVQ   BX, X0
	PSHUFL $0, X0, X0
	MOVO   X0, X1
	MOVOU  (AX), X6
	PADDL  X6, X0
	MOVOU  16(AX), X6
	PADDL  X6, X1
	MOVL   32(AX), BX
	MOVQ   BX, X2
	PSHUFL $0, X2, X2
	MOVL   $0x400000, BX
	MOVQ   BX, X3
	PSHUFL $0, X3, X3
	MOVL   $0x01000100, BX
	MOVQ   BX, X4
	PSHUFL $0, X4, X4
	MOVL   $128, BX
	MOVQ   BX, X5
	PSHUFL $0, X5, X5
	MOVQ   a_base+0(FP), DI
	MOVQ   a_len+8(FP), CX
	MOVQ   b_base+24(FP), R8
	MOVQ   pi+48(FP), SI
	MOVQ   qi+56(FP), DX
	MOVQ   pg+64(FP), R9
	MOVQ   qg+72(FP), R10
	MOVQ   CX, R11
	ANDQ   $7, R11
	SHRQ   $3, CX

loop2:
	WEIGHTS
	LERP8(SI, DX, DI)
	LERP8(R9, R10, R8)
	PADDL X2, X0
	PADDL X2, X1
	ADDQ  $16, SI
	ADDQ  $16, DX
	ADDQ  $16, R9
	ADDQ  $16, R10
	ADDQ  $8, DI
	ADDQ  $8, R8
	DECQ  CX
	JNZ   loop2

	// The last pixels: one more block ending at the last pixel, which
	// starts 8 − R11 pixels back.
	TESTQ  R11, R11
	JZ     done2
	MOVQ   $8, R12
	SUBQ   R11, R12
	SUBQ   R12, DI
	SUBQ   R12, R8
	SHLQ   $1, R12
	SUBQ   R12, SI
	SUBQ   R12, DX
	SUBQ   R12, R9
	SUBQ   R12, R10
	SHRQ   $1, R12
	MOVL   36(AX), BX
	IMULL  R12, BX
	MOVQ   BX, X6
	PSHUFL $0, X6, X6
	PSUBL  X6, X0
	PSUBL  X6, X1
	WEIGHTS
	LERP8(SI, DX, DI)
	LERP8(R9, R10, R8)

done2:
	RET
