//go:build !purego

#include "go_asm.h"
#include "textflag.h"

// The steady-state windows in SSE2 (baseline amd64). pushWindowsGo and
// steadinessGo in window.go are the reference: every sum is the same IEEE
// operation on the same operands in the same order per channel (packed
// lanes are independent; a+b = b+a and a·b = b·a exactly), so the results
// agree bit for bit. window4's sums are [nCh]float64 arrays: lane pair 0 is
// (valve, airflow), pair 1 is (SAT, HW temperature).

// func pushWindowsAsm(st *termState, in *inputs)
//
// Registers: DI = &st.in, SI = &st.dat, DX = in; the window4 sums stay in
// X4..X9 (Σx, Σx², Σj·x; pairs 0 and 1) and the DAT sums in X10..X12
// (Σx, Σx², Σj·x) for the steady checks at the end.
TEXT ·pushWindowsAsm(SB), NOSPLIT, $0-16
	MOVQ	st+0(FP), DI
	MOVQ	in+8(FP), DX
	LEAQ	termState_dat(DI), SI
	ADDQ	$termState_in, DI
	MOVSD	inputs_u(DX), X0
	MOVHPD	inputs_v(DX), X0 // X0 = (valve, airflow)
	MOVSD	inputs_sat(DX), X1
	MOVHPD	inputs_hw(DX), X1 // X1 = (SAT, HW)
	MOVQ	window4_fullK(DI), R13 // the shared constants (R13, and R12 and R11 below)
	MOVQ	window4_head(DI), AX
	MOVQ	window4_n(DI), BX
	MOVQ	window4_count(DI), CX
	MOVQ	AX, R8
	SHLQ	$5, R8
	ADDQ	window4_ring(DI), R8 // R8 = &ring[head]
	MOVUPD	window4_sum(DI), X4
	MOVUPD	window4_sum+16(DI), X5
	MOVUPD	window4_sumSq(DI), X6
	MOVUPD	window4_sumSq+16(DI), X7
	MOVUPD	window4_sumJ(DI), X8
	MOVUPD	window4_sumJ+16(DI), X9
	CMPQ	CX, BX
	JGE	slide4

	// Filling: Σj·x += j·x, Σx += x, Σx² += x·x with j = count.
	CVTSQ2SD	CX, X2
	UNPCKLPD	X2, X2
	MOVAPD	X2, X3
	MULPD	X0, X2
	MULPD	X1, X3
	ADDPD	X2, X8
	ADDPD	X3, X9
	ADDPD	X0, X4
	ADDPD	X1, X5
	MOVAPD	X0, X2
	MULPD	X0, X2
	MOVAPD	X1, X3
	MULPD	X1, X3
	ADDPD	X2, X6
	ADDPD	X3, X7
	INCQ	CX
	MOVQ	CX, window4_count(DI)
	JMP	store4

slide4:
	// Full: Σj·x = Σj·x − (Σx − old) + (n−1)·x, Σx += x − old,
	// Σx² += x·x − old·old.
	MOVUPD	0(R8), X2 // old (valve, airflow)
	MOVUPD	16(R8), X3 // old (SAT, HW)
	MOVAPD	X4, X11
	SUBPD	X2, X11
	SUBPD	X11, X8
	MOVAPD	X5, X12
	SUBPD	X3, X12
	SUBPD	X12, X9
	MOVUPD	slopeConst2_n1(R13), X11
	MULPD	X0, X11
	ADDPD	X11, X8
	MOVUPD	slopeConst2_n1(R13), X12
	MULPD	X1, X12
	ADDPD	X12, X9
	MOVAPD	X0, X11
	SUBPD	X2, X11
	ADDPD	X11, X4
	MOVAPD	X1, X12
	SUBPD	X3, X12
	ADDPD	X12, X5
	MULPD	X2, X2
	MULPD	X3, X3
	MOVAPD	X0, X11
	MULPD	X0, X11
	SUBPD	X2, X11
	ADDPD	X11, X6
	MOVAPD	X1, X12
	MULPD	X1, X12
	SUBPD	X3, X12
	ADDPD	X12, X7
	INCQ	window4_pushes(DI)

store4:
	MOVUPD	X4, window4_sum(DI)
	MOVUPD	X5, window4_sum+16(DI)
	MOVUPD	X6, window4_sumSq(DI)
	MOVUPD	X7, window4_sumSq+16(DI)
	MOVUPD	X8, window4_sumJ(DI)
	MOVUPD	X9, window4_sumJ+16(DI)
	MOVUPD	X0, 0(R8)
	MOVUPD	X1, 16(R8)
	INCQ	AX
	CMPQ	AX, BX
	JNE	head4
	XORL	AX, AX

head4:
	MOVQ	AX, window4_head(DI)
	CMPQ	window4_pushes(DI), $const_rebuildEvery
	JGE	rebuild4

dat:
	// The DAT window (scalar): window.push.
	MOVQ	window_fullK(SI), R12
	MOVSD	inputs_dat(DX), X0
	MOVQ	window_head(SI), AX
	MOVQ	window_n(SI), BX
	MOVQ	window_count(SI), CX
	MOVQ	window_ring(SI), R8
	LEAQ	(R8)(AX*8), R8 // R8 = &ring[head]
	MOVSD	window_sum(SI), X10
	MOVSD	window_sumSq(SI), X11
	MOVSD	window_sumJ(SI), X12
	CMPQ	CX, BX
	JGE	slideD

	CVTSQ2SD	CX, X2
	MULSD	X0, X2
	ADDSD	X2, X12
	ADDSD	X0, X10
	MOVAPD	X0, X2
	MULSD	X0, X2
	ADDSD	X2, X11
	INCQ	CX
	MOVQ	CX, window_count(SI)
	MOVSD	X10, window_sum(SI)
	MOVSD	X11, window_sumSq(SI)
	MOVSD	X12, window_sumJ(SI)
	MOVSD	X0, (R8)
	INCQ	AX
	CMPQ	AX, BX
	JNE	fillHeadD
	XORL	AX, AX

fillHeadD:
	MOVQ	AX, window_head(SI)
	JMP	check

slideD:
	MOVSD	(R8), X2 // old
	MOVAPD	X10, X3
	SUBSD	X2, X3
	SUBSD	X3, X12
	MOVSD	slopeConst_n1(R12), X3
	MULSD	X0, X3
	ADDSD	X3, X12
	MOVAPD	X0, X3
	SUBSD	X2, X3
	ADDSD	X3, X10
	MULSD	X2, X2
	MOVAPD	X0, X3
	MULSD	X0, X3
	SUBSD	X2, X3
	ADDSD	X3, X11
	MOVSD	X10, window_sum(SI)
	MOVSD	X11, window_sumSq(SI)
	MOVSD	X12, window_sumJ(SI)
	MOVSD	X0, (R8)
	INCQ	AX
	CMPQ	AX, BX
	JNE	slideHeadD
	XORL	AX, AX

slideHeadD:
	MOVQ	AX, window_head(SI)
	INCQ	window_pushes(SI)
	CMPQ	window_pushes(SI), $const_rebuildEvery
	JGE	rebuildD

check:
	// steadyGo. CX = DAT count, BX = its n. DAT: full, |slope| ≤ tempSlope
	// and variance ≤ tempVar, slope = (n·Σjx − Σj·Σx)·invDen, variance =
	// max(0, (Σx² − Σx·Σx·invN)·invN).
	CMPQ	CX, BX
	JNE	unsteady
	MOVQ	window4_lim(DI), R11
	PCMPEQL	X14, X14
	PSRLQ	$1, X14 // |x| mask in both lanes
	MOVSD	slopeConst_n(R12), X0
	MULSD	X12, X0
	MOVSD	slopeConst_sj(R12), X1
	MULSD	X10, X1
	SUBSD	X1, X0
	MULSD	slopeConst_invDen(R12), X0
	ANDPD	X14, X0
	MOVSD	steadyLimits_tempSlope(R11), X1
	UCOMISD	X0, X1
	JCS	unsteady // tempSlope < |slope| or unordered
	MULSD	X10, X10
	MOVSD	slopeConst_invN(R12), X3
	MULSD	X3, X10
	SUBSD	X10, X11
	MULSD	X3, X11
	XORPS	X2, X2
	MAXSD	X11, X2 // X2 = X11 < 0 ? 0 : X11 (NaN stays)
	MOVSD	steadyLimits_tempVar(R11), X1
	UCOMISD	X2, X1
	JCS	unsteady

	// Inputs (inputsSteadyGo): the window full, then every limit at once
	// (the Go form's early returns change nothing but the work done).
	MOVQ	window4_count(DI), AX
	CMPQ	AX, window4_n(DI)
	JNE	datOnly
	MOVUPD	slopeConst2_n(R13), X0
	MOVAPD	X0, X1
	MULPD	X8, X0
	MULPD	X9, X1
	MOVUPD	slopeConst2_sj(R13), X2
	MOVAPD	X2, X3
	MULPD	X4, X2
	MULPD	X5, X3
	SUBPD	X2, X0
	SUBPD	X3, X1
	MOVUPD	slopeConst2_invDen(R13), X2
	MULPD	X2, X0
	MULPD	X2, X1
	ANDPD	X14, X0
	ANDPD	X14, X1 // X1 = (|slope SAT|, |slope HW|)
	MOVUPD	slopeConst2_n1(R13), X2
	MULPD	X2, X0 // X0 = |slope|·(n−1) of (valve, airflow)

	// fa = airFrac·(Σx_air·invN); limits fa·fa + 1e-6 (variance) and
	// 2·fa + 1e-3 (travel).
	MOVHLPS	X4, X13
	MULSD	slopeConst2_invN(R13), X13
	MULSD	steadyLimits_airFrac(R11), X13
	MOVAPD	X13, X12
	MULSD	X13, X12
	ADDSD	$(1e-6), X12
	MULSD	$(2.0), X13
	ADDSD	$(1e-3), X13
	MOVSD	steadyLimits_span(R11), X10
	UNPCKLPD	X13, X10 // (span, 2·fa + 1e-3)
	MOVSD	steadyLimits_valveVar(R11), X11
	UNPCKLPD	X12, X11 // (valveVar, fa·fa + 1e-6)

	// Variances, clamped at 0: X3 = (valve, airflow), X4 = (SAT, HW).
	MOVUPD	slopeConst2_invN(R13), X2
	MULPD	X4, X4
	MULPD	X5, X5
	MULPD	X2, X4
	MULPD	X2, X5
	SUBPD	X4, X6
	SUBPD	X5, X7
	MULPD	X2, X6
	MULPD	X2, X7
	XORPS	X3, X3
	MAXPD	X6, X3
	XORPS	X4, X4
	MAXPD	X7, X4

	CMPPD	X0, X10, $1 // limit < travel
	CMPPD	X3, X11, $1 // limit < variance
	ORPD	X11, X10

	// SAT: tempSlope < |slope| or tempVar < variance; HW: !(|slope| ≤ hwSlope).
	MOVUPD	steadyLimits_tempSlope(R11), X12 // (tempSlope, hwSlope)
	MOVAPD	X12, X13
	CMPPD	X1, X13, $1 // lane 0: tempSlope < |slope SAT|
	MOVSD	steadyLimits_tempVar(R11), X2
	CMPPD	X4, X2, $1 // lane 0: tempVar < variance SAT
	ORPD	X2, X13
	CMPPD	X12, X1, $6 // lane 1: !(|slope HW| ≤ hwSlope)
	SHUFPD	$2, X1, X13 // (lane 0 of X13, lane 1 of X1)
	ORPD	X13, X10
	MOVMSKPD	X10, AX
	TESTL	AX, AX
	JNE	datOnly
	MOVB	$1, window4_datSteady(DI)
	MOVB	$1, window4_steady(DI)
	RET

datOnly:
	MOVB	$1, window4_datSteady(DI)
	MOVB	$0, window4_steady(DI)
	RET

unsteady:
	MOVB	$0, window4_datSteady(DI)
	MOVB	$0, window4_steady(DI)
	RET

rebuild4:
	// window4.rebuild: the sums from the ring, oldest sample first
	// (AX = head, BX = n).
	MOVQ	$0, window4_pushes(DI)
	MOVQ	window4_count(DI), CX
	XORPS	X4, X4
	XORPS	X5, X5
	XORPS	X6, X6
	XORPS	X7, X7
	XORPS	X8, X8
	XORPS	X9, X9
	MOVQ	AX, R9
	SUBQ	CX, R9
	JGE	start4
	ADDQ	BX, R9

start4:
	MOVQ	window4_ring(DI), R10
	XORL	R11, R11
	TESTQ	CX, CX
	JEQ	done4

loop4:
	MOVQ	R9, R12
	SHLQ	$5, R12
	MOVUPD	0(R10)(R12*1), X0
	MOVUPD	16(R10)(R12*1), X1
	ADDPD	X0, X4
	ADDPD	X1, X5
	MOVAPD	X0, X2
	MULPD	X0, X2
	ADDPD	X2, X6
	MOVAPD	X1, X3
	MULPD	X1, X3
	ADDPD	X3, X7
	CVTSQ2SD	R11, X10
	UNPCKLPD	X10, X10
	MULPD	X10, X0
	ADDPD	X0, X8
	MULPD	X10, X1
	ADDPD	X1, X9
	INCQ	R9
	CMPQ	R9, BX
	JLT	next4
	XORL	R9, R9

next4:
	INCQ	R11
	CMPQ	R11, CX
	JLT	loop4

done4:
	MOVUPD	X4, window4_sum(DI)
	MOVUPD	X5, window4_sum+16(DI)
	MOVUPD	X6, window4_sumSq(DI)
	MOVUPD	X7, window4_sumSq+16(DI)
	MOVUPD	X8, window4_sumJ(DI)
	MOVUPD	X9, window4_sumJ+16(DI)
	JMP	dat

rebuildD:
	// window.rebuild (AX = head, BX = n); leaves CX = count for check.
	MOVQ	$0, window_pushes(SI)
	MOVQ	window_count(SI), CX
	XORPS	X10, X10
	XORPS	X11, X11
	XORPS	X12, X12
	MOVQ	AX, R9
	SUBQ	CX, R9
	JGE	startD
	ADDQ	BX, R9

startD:
	MOVQ	window_ring(SI), R10
	XORL	R11, R11
	TESTQ	CX, CX
	JEQ	doneD

loopD:
	MOVSD	(R10)(R9*8), X0
	ADDSD	X0, X10
	MOVAPD	X0, X2
	MULSD	X0, X2
	ADDSD	X2, X11
	CVTSQ2SD	R11, X3
	MULSD	X3, X0
	ADDSD	X0, X12
	INCQ	R9
	CMPQ	R9, BX
	JLT	nextD
	XORL	R9, R9

nextD:
	INCQ	R11
	CMPQ	R11, CX
	JLT	loopD

doneD:
	MOVSD	X10, window_sum(SI)
	MOVSD	X11, window_sumSq(SI)
	MOVSD	X12, window_sumJ(SI)
	JMP	check
