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
TEXT ·pushWindowsAsm(SB), NOSPLIT, $0-16
	MOVQ	st+0(FP), DI
	MOVQ	in+8(FP), DX
	LEAQ	termState_dat(DI), SI
	ADDQ	$termState_in, DI
	MOVSD	inputs_u(DX), X0
	MOVHPD	inputs_v(DX), X0 // X0 = (valve, airflow)
	MOVSD	inputs_sat(DX), X1
	MOVHPD	inputs_hw(DX), X1 // X1 = (SAT, HW)
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
	MOVUPD	window4_fullK+slopeConst2_n1(DI), X10
	MOVAPD	X4, X11
	SUBPD	X2, X11
	SUBPD	X11, X8
	MOVAPD	X5, X12
	SUBPD	X3, X12
	SUBPD	X12, X9
	MOVAPD	X10, X11
	MULPD	X0, X11
	ADDPD	X11, X8
	MULPD	X1, X10
	ADDPD	X10, X9
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
	MOVSD	inputs_dat(DX), X0
	MOVQ	window_head(SI), AX
	MOVQ	window_n(SI), BX
	MOVQ	window_count(SI), CX
	MOVQ	window_ring(SI), R8
	LEAQ	(R8)(AX*8), R8 // R8 = &ring[head]
	MOVSD	window_sum(SI), X4
	MOVSD	window_sumSq(SI), X6
	MOVSD	window_sumJ(SI), X8
	CMPQ	CX, BX
	JGE	slideD

	CVTSQ2SD	CX, X2
	MULSD	X0, X2
	ADDSD	X2, X8
	ADDSD	X0, X4
	MOVAPD	X0, X2
	MULSD	X0, X2
	ADDSD	X2, X6
	INCQ	CX
	MOVQ	CX, window_count(SI)
	MOVSD	X4, window_sum(SI)
	MOVSD	X6, window_sumSq(SI)
	MOVSD	X8, window_sumJ(SI)
	MOVSD	X0, (R8)
	INCQ	AX
	CMPQ	AX, BX
	JNE	fillHeadD
	XORL	AX, AX

fillHeadD:
	MOVQ	AX, window_head(SI)
	RET

slideD:
	MOVSD	(R8), X2 // old
	MOVAPD	X4, X11
	SUBSD	X2, X11
	SUBSD	X11, X8
	MOVSD	window_fullK+slopeConst_n1(SI), X10
	MULSD	X0, X10
	ADDSD	X10, X8
	MOVAPD	X0, X11
	SUBSD	X2, X11
	ADDSD	X11, X4
	MULSD	X2, X2
	MOVAPD	X0, X11
	MULSD	X0, X11
	SUBSD	X2, X11
	ADDSD	X11, X6
	MOVSD	X4, window_sum(SI)
	MOVSD	X6, window_sumSq(SI)
	MOVSD	X8, window_sumJ(SI)
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
	// window.rebuild (AX = head, BX = n).
	MOVQ	$0, window_pushes(SI)
	MOVQ	window_count(SI), CX
	XORPS	X4, X4
	XORPS	X6, X6
	XORPS	X8, X8
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
	ADDSD	X0, X4
	MOVAPD	X0, X2
	MULSD	X0, X2
	ADDSD	X2, X6
	CVTSQ2SD	R11, X10
	MULSD	X10, X0
	ADDSD	X0, X8
	INCQ	R9
	CMPQ	R9, BX
	JLT	nextD
	XORL	R9, R9

nextD:
	INCQ	R11
	CMPQ	R11, CX
	JLT	loopD

doneD:
	MOVSD	X4, window_sum(SI)
	MOVSD	X6, window_sumSq(SI)
	MOVSD	X8, window_sumJ(SI)
	RET

// func steadinessAsm(st *termState, en *Engine) (datSteady, steady bool)
TEXT ·steadinessAsm(SB), NOSPLIT, $0-18
	MOVQ	st+0(FP), DI
	MOVQ	en+8(FP), DX
	LEAQ	termState_dat(DI), SI
	ADDQ	$termState_in, DI
	MOVB	$0, datSteady+16(FP)
	MOVB	$0, steady+17(FP)
	MOVQ	window_count(SI), AX
	CMPQ	AX, window_n(SI)
	JNE	done

	// DAT: |slope| ≤ tempSlope and variance ≤ tempVar, slope =
	// (n·Σjx − Σj·Σx)·invDen, variance = max(0, (Σx² − Σx·Σx·invN)·invN).
	PCMPEQL	X14, X14
	PSRLQ	$1, X14 // |x| mask in both lanes
	MOVSD	window_fullK+slopeConst_n(SI), X0
	MULSD	window_sumJ(SI), X0
	MOVSD	window_fullK+slopeConst_sj(SI), X1
	MULSD	window_sum(SI), X1
	SUBSD	X1, X0
	MULSD	window_fullK+slopeConst_invDen(SI), X0
	ANDPD	X14, X0
	MOVSD	Engine_tempSlope(DX), X1
	UCOMISD	X0, X1
	JCS	done // tempSlope < |slope| or unordered
	MOVSD	window_sum(SI), X2
	MULSD	X2, X2
	MOVSD	window_fullK+slopeConst_invN(SI), X3
	MULSD	X3, X2
	MOVSD	window_sumSq(SI), X1
	SUBSD	X2, X1
	MULSD	X3, X1
	XORPS	X2, X2
	MAXSD	X1, X2 // X2 = X1 < 0 ? 0 : X1 (NaN stays)
	MOVSD	Engine_tempVar(DX), X1
	UCOMISD	X2, X1
	JCS	done
	MOVB	$1, datSteady+16(FP)

	// Inputs: the window full, then every limit at once (the Go form's
	// early returns change nothing but the work done).
	MOVQ	window4_count(DI), AX
	CMPQ	AX, window4_n(DI)
	JNE	done
	MOVUPD	window4_sum(DI), X2
	MOVUPD	window4_sum+16(DI), X3
	MOVUPD	window4_sumJ(DI), X0
	MOVUPD	window4_sumJ+16(DI), X1
	MOVUPD	window4_fullK+slopeConst2_n(DI), X4
	MULPD	X4, X0
	MULPD	X4, X1
	MOVUPD	window4_fullK+slopeConst2_sj(DI), X4
	MOVAPD	X4, X5
	MULPD	X2, X4
	MULPD	X3, X5
	SUBPD	X4, X0
	SUBPD	X5, X1
	MOVUPD	window4_fullK+slopeConst2_invDen(DI), X4
	MULPD	X4, X0
	MULPD	X4, X1
	ANDPD	X14, X0
	ANDPD	X14, X1 // X1 = (|slope SAT|, |slope HW|)
	MOVUPD	window4_fullK+slopeConst2_n1(DI), X4
	MULPD	X4, X0 // X0 = |slope|·(n−1) of (valve, airflow)

	MOVUPD	window4_fullK+slopeConst2_invN(DI), X4
	MULPD	X2, X2
	MULPD	X3, X3
	MULPD	X4, X2
	MULPD	X4, X3
	MOVUPD	window4_sumSq(DI), X5
	MOVUPD	window4_sumSq+16(DI), X6
	SUBPD	X2, X5
	SUBPD	X3, X6
	MULPD	X4, X5
	MULPD	X4, X6
	XORPS	X2, X2
	MAXPD	X5, X2 // X2 = variance (valve, airflow), clamped at 0
	XORPS	X3, X3
	MAXPD	X6, X3 // X3 = variance (SAT, HW)

	// fa = SteadyAirflowFrac·(Σx_air·invN); limits fa·fa + 1e-6 (variance)
	// and 2·fa + 1e-3 (travel).
	MOVSD	window4_sum+8(DI), X7
	MULSD	window4_fullK+slopeConst2_invN(DI), X7
	MULSD	Engine_cfg+Config_SteadyAirflowFrac(DX), X7
	MOVAPD	X7, X8
	MULSD	X7, X8
	ADDSD	$(1e-6), X8
	MULSD	$(2.0), X7
	ADDSD	$(1e-3), X7
	MOVSD	Engine_cfg+Config_SteadyValveSpan(DX), X9
	UNPCKLPD	X7, X9 // (SteadyValveSpan, 2·fa + 1e-3)
	MOVSD	Engine_valveVar(DX), X10
	UNPCKLPD	X8, X10 // (valveVar, fa·fa + 1e-6)
	CMPPD	X0, X9, $1 // limit < travel
	CMPPD	X2, X10, $1 // limit < variance
	ORPD	X10, X9

	// SAT: tempSlope < |slope| or tempVar < variance; HW: !(|slope| ≤ hwSlope).
	MOVSD	Engine_tempSlope(DX), X11
	MOVHPD	Engine_hwSlope(DX), X11
	MOVAPD	X11, X12
	CMPPD	X1, X12, $1 // lane 0: tempSlope < |slope SAT|
	MOVSD	Engine_tempVar(DX), X13
	CMPPD	X3, X13, $1 // lane 0: tempVar < variance SAT
	ORPD	X13, X12
	CMPPD	X11, X1, $6 // lane 1: !(|slope HW| ≤ hwSlope)
	SHUFPD	$2, X1, X12 // (lane 0 of X12, lane 1 of X1)
	ORPD	X12, X9
	MOVMSKPD	X9, AX
	TESTL	AX, AX
	JNE	done
	MOVB	$1, steady+17(FP)

done:
	RET
