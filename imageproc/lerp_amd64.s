//go:build amd64 && !purego

#include "textflag.h"
#include "ycc_amd64.h"

// Eight pixels a step, SSE2 only. Per pixel j: f = ((frac_j >> 1) + 2^22)
// >> 23 (lerpWeight), then (p·(256 − f) + q·f + 128) >> 8 by PMADDWL on
// interleaved (p, q) and (256 − f, f) words, packed to int16 (and for
// bytes with unsigned saturation, which is clip8).
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

// LERPW interpolates the eight int16 pairs at (P) and (Q) with the weight
// words in X8 (lanes 0–3) and X7 (4–7), leaving eight int16 in X11; it
// uses X9 and X10.
#define LERPW(P, Q) \
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
	PACKSSLW  X9, X11

// LERP8 is LERPW clipped to bytes, stored at (OUT).
#define LERP8(P, Q, OUT) \
	LERPW(P, Q) \
	PACKUSWB X11, X11 \
	MOVQ     X11, (OUT)

// BLOCK leaves the eight results as int16 in X11 and moves on.
#define BLOCK \
	WEIGHTS \
	LERPW(SI, DX) \
	PADDL X2, X0 \
	PADDL X2, X1 \
	ADDQ  $16, SI \
	ADDQ  $16, DX

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

// Constants of fillYCbCrSIMD, eight words each: the JFIF chroma
// coefficients C (16 fractional bits) split as C = 512·q + r, 0 ≤ r < 512,
// so that ⌊C·d / 512⌋ = q·d + ⌊r·d / 512⌋, the last a PMULHW of 2·d by
// 64·r: red 91881 = 179·512 + 233, blue 116130 = 226·512 + 418, green
// −22554 = −45·512 + 486 (from Cb) and −46802 = −92·512 + 302 (from Cr).
DATA zero16<>+0(SB)/8, $0
DATA zero16<>+8(SB)/8, $0
GLOBL zero16<>(SB), (NOPTR+RODATA), $16
DATA w128<>+0(SB)/8, $0x0080008000800080
DATA w128<>+8(SB)/8, $0x0080008000800080
GLOBL w128<>(SB), (NOPTR+RODATA), $16
DATA rq<>+0(SB)/8, $0x00b300b300b300b3
DATA rq<>+8(SB)/8, $0x00b300b300b300b3
GLOBL rq<>(SB), (NOPTR+RODATA), $16
DATA rr<>+0(SB)/8, $0x3a403a403a403a40
DATA rr<>+8(SB)/8, $0x3a403a403a403a40
GLOBL rr<>(SB), (NOPTR+RODATA), $16
DATA bq<>+0(SB)/8, $0x00e200e200e200e2
DATA bq<>+8(SB)/8, $0x00e200e200e200e2
GLOBL bq<>(SB), (NOPTR+RODATA), $16
DATA br<>+0(SB)/8, $0x6880688068806880
DATA br<>+8(SB)/8, $0x6880688068806880
GLOBL br<>(SB), (NOPTR+RODATA), $16
DATA gbq<>+0(SB)/8, $0xffd3ffd3ffd3ffd3
DATA gbq<>+8(SB)/8, $0xffd3ffd3ffd3ffd3
GLOBL gbq<>(SB), (NOPTR+RODATA), $16
DATA gbr<>+0(SB)/8, $0x7980798079807980
DATA gbr<>+8(SB)/8, $0x7980798079807980
GLOBL gbr<>(SB), (NOPTR+RODATA), $16
DATA grq<>+0(SB)/8, $0xffa4ffa4ffa4ffa4
DATA grq<>+8(SB)/8, $0xffa4ffa4ffa4ffa4
GLOBL grq<>(SB), (NOPTR+RODATA), $16
DATA grr<>+0(SB)/8, $0x4b804b804b804b80
DATA grr<>+8(SB)/8, $0x4b804b804b804b80
GLOBL grr<>(SB), (NOPTR+RODATA), $16
DATA lim<>+0(SB)/8, $0x3fff3fff3fff3fff
DATA lim<>+8(SB)/8, $0x3fff3fff3fff3fff
GLOBL lim<>(SB), (NOPTR+RODATA), $16
DATA neglim<>+0(SB)/8, $0xc001c001c001c001
DATA neglim<>+8(SB)/8, $0xc001c001c001c001
GLOBL neglim<>(SB), (NOPTR+RODATA), $16

// FLOOR512 leaves ⌊C·D / 512⌋ in the words of DST for the chroma words D
// and C = 512·q + r given as Q (words q) and R (words 64·r): q·D plus the
// high half of 2·D times 64·r; it uses T.
#define FLOOR512(D, Q, R, DST, T) \
	MOVO   D, DST \
	PMULLW Q, DST \
	MOVO   D, T \
	PADDW  T, T \
	PMULHW R, T \
	PADDW  T, DST

// SEP4 leaves four separated values (int32) in DST; SEP writes eight
// separated values (coefficient pairs RG and B, constant
// A) of the channel pairs in X4, X1 ((red, green), lanes 0–3 and 4–7) and
// X5, X3 ((blue, 0)) to OUT: (A − Σ k·channel) >> 17, clamped to
// ±pairLimit. It uses X0, X2, X6.
#define SEP4(RGP, BP, RG, B, A, DST) \
	MOVO    RGP, DST \
	PMADDWL RG, DST \
	MOVO    BP, X0 \
	PMADDWL B, X0 \
	PADDL   DST, X0 \
	MOVO    A, DST \
	PSUBL   X0, DST \
	PSRAL   $17, DST

#define SEP(RG, B, A, OUT) \
	SEP4(X4, X5, RG, B, A, X6) \
	SEP4(X1, X3, RG, B, A, X2) \
	PACKSSLW X2, X6 \
	PMINSW   lim<>(SB), X6 \
	PMAXSW   neglim<>(SB), X6 \
	MOVOU    X6, (OUT)

// FILL8 separates the eight pixels at SI (luma), BX and DX (their four
// Cb and Cr samples) into DI (ink) and R10 (grid) with the segment's
// constants in X7–X15; it uses AX and X0–X6.
#define FILL8 \
	MOVQ      (SI), X0 \
	PUNPCKLBW zero16<>(SB), X0 \
	PSLLW     $7, X0 \
	CHROMA(BX, X1, zero16<>(SB), w128<>(SB)) \
	CHROMA(DX, X2, zero16<>(SB), w128<>(SB)) \
	FLOOR512(X2, rq<>(SB), rr<>(SB), X3, X4) \
	FLOOR512(X1, bq<>(SB), br<>(SB), X4, X5) \
	FLOOR512(X1, gbq<>(SB), gbr<>(SB), X5, X6) \
	FLOOR512(X2, grq<>(SB), grr<>(SB), X6, X1) \
	PADDW     X6, X5 \
	MOVO      X0, X1 \
	PADDSW    X3, X1 \
	PMAXSW    zero16<>(SB), X1 \
	PMINSW    X11, X1 \
	MOVO      X0, X2 \
	PADDSW    X5, X2 \
	PMAXSW    zero16<>(SB), X2 \
	PMINSW    X12, X2 \
	MOVO      X0, X3 \
	PADDSW    X4, X3 \
	PMAXSW    zero16<>(SB), X3 \
	PMINSW    X13, X3 \
	MOVO      X1, X4 \
	PUNPCKLWL X2, X4 \
	PUNPCKHWL X2, X1 \
	MOVO      X3, X5 \
	PUNPCKLWL zero16<>(SB), X5 \
	PUNPCKHWL zero16<>(SB), X3 \
	SEP(X7, X8, X14, DI) \
	SEP(X9, X10, X15, R10)

// func fillYCbCrSIMD(di, dg []int16, y, cb, cr []uint8, segs []ycbcrLanes, aInk, aGrid int32)
//
// R8 the segment's constants (ycbcrLanes: inkRG 0, inkB 4, gridRG 8,
// gridB 12, top 16/20/24; 32 bytes), CX segments left, R9 blocks left in
// the segment.
TEXT ·fillYCbCrSIMD(SB), NOSPLIT, $0-152
	MOVQ   di_base+0(FP), DI
	MOVQ   dg_base+24(FP), R10
	MOVQ   y_base+48(FP), SI
	MOVQ   cb_base+72(FP), BX
	MOVQ   cr_base+96(FP), DX
	MOVQ   segs_base+120(FP), R8
	MOVQ   segs_len+128(FP), CX
	MOVL   aInk+144(FP), AX
	MOVQ   AX, X14
	PSHUFL $0, X14, X14
	MOVL   aGrid+148(FP), AX
	MOVQ   AX, X15
	PSHUFL $0, X15, X15
	TESTQ  CX, CX
	JZ     doneFill

segFill:
	MOVL   0(R8), AX
	MOVQ   AX, X7
	PSHUFL $0, X7, X7
	MOVL   4(R8), AX
	MOVQ   AX, X8
	PSHUFL $0, X8, X8
	MOVL   8(R8), AX
	MOVQ   AX, X9
	PSHUFL $0, X9, X9
	MOVL   12(R8), AX
	MOVQ   AX, X10
	PSHUFL $0, X10, X10
	MOVL   16(R8), AX
	MOVQ   AX, X11
	PSHUFL $0, X11, X11
	MOVL   20(R8), AX
	MOVQ   AX, X12
	PSHUFL $0, X12, X12
	MOVL   24(R8), AX
	MOVQ   AX, X13
	PSHUFL $0, X13, X13
	MOVQ   $4, R9

blockFill:
	FILL8
	ADDQ $8, SI
	ADDQ $4, BX
	ADDQ $4, DX
	ADDQ $16, DI
	ADDQ $16, R10
	DECQ R9
	JNZ  blockFill
	ADDQ $32, R8
	DECQ CX
	JNZ  segFill

doneFill:
	RET
