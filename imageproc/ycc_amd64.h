// Shared by the front end's SSE2 kernels (lerp_amd64.s,
// worksample_amd64.s).

// CHROMA loads the four chroma bytes at P into the words of X, each less
// 128 (W128: eight words of 128; ZERO: sixteen zero bytes) and each twice,
// one per pixel of the pair it serves; it uses AX.
#define CHROMA(P, X, ZERO, W128) \
	MOVL      (P), AX \
	MOVQ      AX, X \
	PUNPCKLBW ZERO, X \
	PSUBW     W128, X \
	PUNPCKLWL X, X
