//go:build amd64 && !purego

#include "textflag.h"
#include "ycc_amd64.h"

// image/color's YCbCrToRGB, R = clamp((Y·65793 + 91881·Cr′) >> 16) and
// so on (Cr′ = Cr − 128), with each product split at 65536 so that the
// 16-bit lanes hold it: 65793 = 65536 + 257, 91881 = 65536 + 26345,
// −46802 = −65536 + 18734, 116130 = 2·65536 − 14942. Then R = clamp(Y + Cr′
// + (257·Y + 26345·Cr′) >> 16), G = clamp(Y − Cr′ + (257·Y − 22554·Cb′ +
// 18734·Cr′) >> 16), B = clamp(Y + 2·Cb′ + (257·Y − 14942·Cb′) >> 16), the
// inner sums by PMADDWL, the clamp by PACKUSWB.
DATA wsZero<>+0(SB)/8, $0
DATA wsZero<>+8(SB)/8, $0
GLOBL wsZero<>(SB), (NOPTR+RODATA), $16
DATA ws128<>+0(SB)/8, $0x0080008000800080
DATA ws128<>+8(SB)/8, $0x0080008000800080
GLOBL ws128<>(SB), (NOPTR+RODATA), $16
// (257, 26345) word pairs
DATA wsR<>+0(SB)/8, $0x66e9010166e90101
DATA wsR<>+8(SB)/8, $0x66e9010166e90101
GLOBL wsR<>(SB), (NOPTR+RODATA), $16
// (257, −22554)
DATA wsG1<>+0(SB)/8, $0xa7e60101a7e60101
DATA wsG1<>+8(SB)/8, $0xa7e60101a7e60101
GLOBL wsG1<>(SB), (NOPTR+RODATA), $16
// (18734, 0)
DATA wsG2<>+0(SB)/8, $0x0000492e0000492e
DATA wsG2<>+8(SB)/8, $0x0000492e0000492e
GLOBL wsG2<>(SB), (NOPTR+RODATA), $16
// (257, −14942)
DATA wsB<>+0(SB)/8, $0xc5a20101c5a20101
DATA wsB<>+8(SB)/8, $0xc5a20101c5a20101
GLOBL wsB<>(SB), (NOPTR+RODATA), $16

// CONV converts the eight luma bytes at YP with the chroma words in X0
// (Cb′) and X1 (Cr′), each twice, into red, green and blue bytes (low
// eight bytes of R, G, B); it uses X2, X6, X10, X11.
#define CONV(YP, R, G, B) \
	MOVQ      (YP), X2 \
	PUNPCKLBW wsZero<>(SB), X2 \
	MOVO      X2, R \
	PUNPCKLWL X1, R \
	PMADDWL   wsR<>(SB), R \
	PSRAL     $16, R \
	MOVO      X2, X6 \
	PUNPCKHWL X1, X6 \
	PMADDWL   wsR<>(SB), X6 \
	PSRAL     $16, X6 \
	PACKSSLW  X6, R \
	PADDW     X2, R \
	PADDW     X1, R \
	PACKUSWB  R, R \
	MOVO      X2, G \
	PUNPCKLWL X0, G \
	PMADDWL   wsG1<>(SB), G \
	MOVO      X1, X6 \
	PUNPCKLWL wsZero<>(SB), X6 \
	PMADDWL   wsG2<>(SB), X6 \
	PADDL     X6, G \
	PSRAL     $16, G \
	MOVO      X2, X10 \
	PUNPCKHWL X0, X10 \
	PMADDWL   wsG1<>(SB), X10 \
	MOVO      X1, X11 \
	PUNPCKHWL wsZero<>(SB), X11 \
	PMADDWL   wsG2<>(SB), X11 \
	PADDL     X11, X10 \
	PSRAL     $16, X10 \
	PACKSSLW  X10, G \
	PADDW     X2, G \
	PSUBW     X1, G \
	PACKUSWB  G, G \
	MOVO      X2, B \
	PUNPCKLWL X0, B \
	PMADDWL   wsB<>(SB), B \
	PSRAL     $16, B \
	MOVO      X2, X6 \
	PUNPCKHWL X0, X6 \
	PMADDWL   wsB<>(SB), X6 \
	PSRAL     $16, X6 \
	PACKSSLW  X6, B \
	PADDW     X2, B \
	PADDW     X0, B \
	PADDW     X0, B \
	PACKUSWB  B, B

// SUM4 leaves in A the sums of the two 4 × 2 blocks of the rows' bytes in
// A and B (as two 64-bit lanes).
#define SUM4(A, B) \
	PUNPCKLLQ B, A \
	PSADBW    wsZero<>(SB), A

// func blocks4SIMD(acc []uint32, ya, yb, cb, cr []uint8)
//
// DI acc, SI ya, R8 yb, BX cb, DX cr, CX pairs of blocks left.
TEXT ·blocks4SIMD(SB), NOSPLIT, $0-120
	MOVQ acc_base+0(FP), DI
	MOVQ acc_len+8(FP), CX
	MOVQ ya_base+24(FP), SI
	MOVQ yb_base+48(FP), R8
	MOVQ cb_base+72(FP), BX
	MOVQ cr_base+96(FP), DX
	SHRQ $3, CX
	TESTQ CX, CX
	JZ   doneBlocks

pairBlocks:
	CHROMA(BX, X0, wsZero<>(SB), ws128<>(SB))
	CHROMA(DX, X1, wsZero<>(SB), ws128<>(SB))
	CONV(SI, X3, X4, X5)
	CONV(R8, X7, X8, X9)
	SUM4(X3, X7)
	SUM4(X4, X8)
	SUM4(X5, X9)
	PSLLQ      $32, X4
	POR        X4, X3
	MOVO       X3, X6
	PUNPCKLQDQ X5, X3
	PUNPCKHQDQ X5, X6
	MOVOU      (DI), X10
	PADDL      X3, X10
	MOVOU      X10, (DI)
	MOVOU      16(DI), X10
	PADDL      X6, X10
	MOVOU      X10, 16(DI)
	ADDQ       $8, SI
	ADDQ       $8, R8
	ADDQ       $4, BX
	ADDQ       $4, DX
	ADDQ       $32, DI
	DECQ       CX
	JNZ        pairBlocks

doneBlocks:
	RET
