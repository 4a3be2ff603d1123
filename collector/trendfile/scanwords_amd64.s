//go:build !purego

#include "textflag.h"

// Constants of scanWordsAsm: keepBytes[0..8], the byte patterns, the
// swarValue multipliers and 10^0..10^7 (float64 bits).
DATA scanTab<>+0x00(SB)/8, $0x0000000000000000
DATA scanTab<>+0x08(SB)/8, $0x00000000000000FF
DATA scanTab<>+0x10(SB)/8, $0x000000000000FFFF
DATA scanTab<>+0x18(SB)/8, $0x0000000000FFFFFF
DATA scanTab<>+0x20(SB)/8, $0x00000000FFFFFFFF
DATA scanTab<>+0x28(SB)/8, $0x000000FFFFFFFFFF
DATA scanTab<>+0x30(SB)/8, $0x0000FFFFFFFFFFFF
DATA scanTab<>+0x38(SB)/8, $0x00FFFFFFFFFFFFFF
DATA scanTab<>+0x40(SB)/8, $0xFFFFFFFFFFFFFFFF
DATA scanTab<>+0x48(SB)/8, $0x0101010101010101 // ones8
DATA scanTab<>+0x50(SB)/8, $0x8080808080808080 // high8
DATA scanTab<>+0x58(SB)/8, $0x3030303030303030 // zeros8 ('0')
DATA scanTab<>+0x60(SB)/8, $0x1E1E1E1E1E1E1E1E // '.' XOR '0'
DATA scanTab<>+0x68(SB)/8, $0x7F7F7F7F7F7F7F7F // low7
DATA scanTab<>+0x70(SB)/8, $0x7676767676767676 // 0x80 - 10
DATA scanTab<>+0x78(SB)/8, $0x000000FF000000FF
DATA scanTab<>+0x80(SB)/8, $0x000F424000000064 // 100 + 1000000<<32
DATA scanTab<>+0x88(SB)/8, $0x0000271000000001 // 1 + 10000<<32
DATA scanTab<>+0x90(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x98(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0xA0(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0xA8(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0xB0(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0xB8(SB)/8, $0x40F86A0000000000 // 1e5
DATA scanTab<>+0xC0(SB)/8, $0x412E848000000000 // 1e6
DATA scanTab<>+0xC8(SB)/8, $0x416312D000000000 // 1e7
DATA scanTab<>+0xD0(SB)/8, $0x8000000000000000 // sign bit
GLOBL scanTab<>(SB), RODATA|NOPTR, $0xD8

// func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32) (int, int, int)
//
// scanWordsGo (fastrow.go) in amd64 assembly, step for step; see there.
// SI rec, DX len(rec)-8, AX i, R13 c, R14 vals, BX the constants; X1
// the sign bit of the cell; the rest is scratch.
TEXT ·scanWordsAsm(SB), NOSPLIT, $0-152
	MOVQ rec_base+0(FP), SI
	MOVQ rec_len+8(FP), DX
	SUBQ $8, DX
	MOVQ i+24(FP), AX
	MOVQ c+32(FP), R13
	MOVQ vals_base+56(FP), R14
	LEAQ scanTab<>(SB), BX
	MOVQ $0, ret2+144(FP)

loop:
	CMPQ R13, last+40(FP)
	JGE  done
	CMPQ AX, DX
	JGT  done

	// w, and k: the first delimiter byte of (x - ones8) &^ x & high8.
	MOVQ (SI)(AX*1), R9
	MOVQ R9, R10
	XORQ pat+48(FP), R10
	MOVQ R10, R8
	SUBQ 0x48(BX), R8
	NOTQ R10
	ANDQ R10, R8
	ANDQ 0x50(BX), R8
	JZ   done
	BSFQ R8, R8
	SHRQ $3, R8
	MOVQ pos_base+104(FP), R11
	MOVL AX, (R11)(R13*4)
	LEAQ 1(AX)(R8*1), AX
	TESTQ R8, R8
	JZ   blank

	// The sign (rare: a branch): shifted off, its bit kept in X1.
	PXOR X1, X1
	CMPB R9, $0x2d
	JEQ  neg

unsigned:
	// x = w XOR zeros8 (R9); nb = R8.
	// dots = ^(((d & low7) + low7) | d | low7) & keepBytes[nb], d = x XOR 0x1E…
	XORQ 0x58(BX), R9
	MOVQ 0x60(BX), R10
	XORQ R9, R10
	MOVQ 0x68(BX), R12
	ANDQ R10, R12
	ADDQ 0x68(BX), R12
	ORQ  R10, R12
	ORQ  0x68(BX), R12
	NOTQ R12
	ANDQ (BX)(R8*8), R12

	// hasDot (DI); pt (R12) = the point's byte, 7 when none (above the
	// digits). A second point stays in the digits and fails their test.
	XORL DI, DI
	TESTQ R12, R12
	SETNE DI
	BTSQ $63, R12
	BSFQ R12, R12
	SHRQ $3, R12

	// Squeeze the point out: x = x&low | (x>>8)&^low, low = keepBytes[pt].
	MOVQ (BX)(R12*8), R10
	MOVQ R9, CX
	SHRQ $8, CX
	ANDQ R10, R9
	NOTQ R10
	ANDQ R10, CX
	ORQ  CX, R9

	// nd = nb - hasDot (R10), frac = (nb-1-pt) & -hasDot (R8).
	MOVQ R8, R10
	SUBQ DI, R10
	JLE  other
	DECQ R8
	SUBQ R12, R8
	NEGQ DI
	ANDQ DI, R8

	// The nd low bytes are digits: ((x & low7) + 0x76…) | x has no bit 7 there.
	MOVQ 0x68(BX), CX
	ANDQ R9, CX
	ADDQ 0x70(BX), CX
	ORQ  R9, CX
	ANDQ (BX)(R10*8), CX
	ANDQ 0x50(BX), CX
	JNZ  other

	// swarValue(x, nd).
	MOVQ $8, CX
	SUBQ R10, CX
	SHLQ $3, CX
	SHLQ CX, R9
	LEAQ (R9)(R9*4), R11
	ADDQ R11, R11
	SHRQ $8, R9
	ADDQ R11, R9
	MOVQ R9, R11
	ANDQ 0x78(BX), R11
	IMULQ 0x80(BX), R11
	SHRQ $16, R9
	ANDQ 0x78(BX), R9
	IMULQ 0x88(BX), R9
	ADDQ R11, R9
	SHRQ $32, R9

	// v = mantissa / 10^frac, with the sign bit.
	XORPS X0, X0
	CVTSQ2SD R9, X0
	DIVSD 0x90(BX)(R8*8), X0
	PXOR X1, X0
	MOVSD X0, (R14)(R13*8)
	MOVQ st_base+80(FP), R11
	MOVB $1, (R11)(R13*1)
	INCQ R13
	JMP  loop

neg:
	MOVSD 0xD0(BX), X1
	SHRQ $8, R9
	DECQ R8
	JMP  unsigned

other:
	MOVQ st_base+80(FP), R11
	MOVB $2, (R11)(R13*1)
	INCQ ret2+144(FP)
	INCQ R13
	JMP  loop

blank:
	MOVQ st_base+80(FP), R11
	MOVB $0, (R11)(R13*1)
	INCQ R13
	JMP  loop

done:
	MOVQ AX, ret+128(FP)
	MOVQ R13, ret1+136(FP)
	RET
