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
DATA scanTab<>+0xD8(SB)/8, $0x9E3779B97F4A7C15 // memoMul
// Shapes at 0xE0, 32 bytes per (nb, pt) = (bytes after the sign, point
// byte or 7 for none): the squeeze mask keepBytes[pt], the digit test
// keepBytes[nd] & high8 (all ones when nd = 0 or the shape cannot occur),
// the swarValue shift 8·(8-nd) and 10^frac.
DATA scanTab<>+0x0E0(SB)/8, $0x0000000000000000 // nb 0 pt 0: low
DATA scanTab<>+0x0E8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x0F0(SB)/8, $0 // swar shift
DATA scanTab<>+0x0F8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x100(SB)/8, $0x00000000000000FF // nb 0 pt 1: low
DATA scanTab<>+0x108(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x110(SB)/8, $0 // swar shift
DATA scanTab<>+0x118(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x120(SB)/8, $0x000000000000FFFF // nb 0 pt 2: low
DATA scanTab<>+0x128(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x130(SB)/8, $0 // swar shift
DATA scanTab<>+0x138(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x140(SB)/8, $0x0000000000FFFFFF // nb 0 pt 3: low
DATA scanTab<>+0x148(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x150(SB)/8, $0 // swar shift
DATA scanTab<>+0x158(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x160(SB)/8, $0x00000000FFFFFFFF // nb 0 pt 4: low
DATA scanTab<>+0x168(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x170(SB)/8, $0 // swar shift
DATA scanTab<>+0x178(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x180(SB)/8, $0x000000FFFFFFFFFF // nb 0 pt 5: low
DATA scanTab<>+0x188(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x190(SB)/8, $0 // swar shift
DATA scanTab<>+0x198(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 0 pt 6: low
DATA scanTab<>+0x1A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x1B0(SB)/8, $0 // swar shift
DATA scanTab<>+0x1B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 0 pt 7: low
DATA scanTab<>+0x1C8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x1D0(SB)/8, $0 // swar shift
DATA scanTab<>+0x1D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1E0(SB)/8, $0x0000000000000000 // nb 1 pt 0: low
DATA scanTab<>+0x1E8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x1F0(SB)/8, $0 // swar shift
DATA scanTab<>+0x1F8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x200(SB)/8, $0x00000000000000FF // nb 1 pt 1: low
DATA scanTab<>+0x208(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x210(SB)/8, $56 // swar shift
DATA scanTab<>+0x218(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x220(SB)/8, $0x000000000000FFFF // nb 1 pt 2: low
DATA scanTab<>+0x228(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x230(SB)/8, $56 // swar shift
DATA scanTab<>+0x238(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x240(SB)/8, $0x0000000000FFFFFF // nb 1 pt 3: low
DATA scanTab<>+0x248(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x250(SB)/8, $56 // swar shift
DATA scanTab<>+0x258(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x260(SB)/8, $0x00000000FFFFFFFF // nb 1 pt 4: low
DATA scanTab<>+0x268(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x270(SB)/8, $56 // swar shift
DATA scanTab<>+0x278(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x280(SB)/8, $0x000000FFFFFFFFFF // nb 1 pt 5: low
DATA scanTab<>+0x288(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x290(SB)/8, $56 // swar shift
DATA scanTab<>+0x298(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 1 pt 6: low
DATA scanTab<>+0x2A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x2B0(SB)/8, $56 // swar shift
DATA scanTab<>+0x2B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 1 pt 7: low
DATA scanTab<>+0x2C8(SB)/8, $0x0000000000000080 // digit test
DATA scanTab<>+0x2D0(SB)/8, $56 // swar shift
DATA scanTab<>+0x2D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2E0(SB)/8, $0x0000000000000000 // nb 2 pt 0: low
DATA scanTab<>+0x2E8(SB)/8, $0x0000000000000080 // digit test
DATA scanTab<>+0x2F0(SB)/8, $56 // swar shift
DATA scanTab<>+0x2F8(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x300(SB)/8, $0x00000000000000FF // nb 2 pt 1: low
DATA scanTab<>+0x308(SB)/8, $0x0000000000000080 // digit test
DATA scanTab<>+0x310(SB)/8, $56 // swar shift
DATA scanTab<>+0x318(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x320(SB)/8, $0x000000000000FFFF // nb 2 pt 2: low
DATA scanTab<>+0x328(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x330(SB)/8, $48 // swar shift
DATA scanTab<>+0x338(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x340(SB)/8, $0x0000000000FFFFFF // nb 2 pt 3: low
DATA scanTab<>+0x348(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x350(SB)/8, $48 // swar shift
DATA scanTab<>+0x358(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x360(SB)/8, $0x00000000FFFFFFFF // nb 2 pt 4: low
DATA scanTab<>+0x368(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x370(SB)/8, $48 // swar shift
DATA scanTab<>+0x378(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x380(SB)/8, $0x000000FFFFFFFFFF // nb 2 pt 5: low
DATA scanTab<>+0x388(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x390(SB)/8, $48 // swar shift
DATA scanTab<>+0x398(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 2 pt 6: low
DATA scanTab<>+0x3A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x3B0(SB)/8, $48 // swar shift
DATA scanTab<>+0x3B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 2 pt 7: low
DATA scanTab<>+0x3C8(SB)/8, $0x0000000000008080 // digit test
DATA scanTab<>+0x3D0(SB)/8, $48 // swar shift
DATA scanTab<>+0x3D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3E0(SB)/8, $0x0000000000000000 // nb 3 pt 0: low
DATA scanTab<>+0x3E8(SB)/8, $0x0000000000008080 // digit test
DATA scanTab<>+0x3F0(SB)/8, $48 // swar shift
DATA scanTab<>+0x3F8(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x400(SB)/8, $0x00000000000000FF // nb 3 pt 1: low
DATA scanTab<>+0x408(SB)/8, $0x0000000000008080 // digit test
DATA scanTab<>+0x410(SB)/8, $48 // swar shift
DATA scanTab<>+0x418(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x420(SB)/8, $0x000000000000FFFF // nb 3 pt 2: low
DATA scanTab<>+0x428(SB)/8, $0x0000000000008080 // digit test
DATA scanTab<>+0x430(SB)/8, $48 // swar shift
DATA scanTab<>+0x438(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x440(SB)/8, $0x0000000000FFFFFF // nb 3 pt 3: low
DATA scanTab<>+0x448(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x450(SB)/8, $40 // swar shift
DATA scanTab<>+0x458(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x460(SB)/8, $0x00000000FFFFFFFF // nb 3 pt 4: low
DATA scanTab<>+0x468(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x470(SB)/8, $40 // swar shift
DATA scanTab<>+0x478(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x480(SB)/8, $0x000000FFFFFFFFFF // nb 3 pt 5: low
DATA scanTab<>+0x488(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x490(SB)/8, $40 // swar shift
DATA scanTab<>+0x498(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 3 pt 6: low
DATA scanTab<>+0x4A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x4B0(SB)/8, $40 // swar shift
DATA scanTab<>+0x4B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 3 pt 7: low
DATA scanTab<>+0x4C8(SB)/8, $0x0000000000808080 // digit test
DATA scanTab<>+0x4D0(SB)/8, $40 // swar shift
DATA scanTab<>+0x4D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4E0(SB)/8, $0x0000000000000000 // nb 4 pt 0: low
DATA scanTab<>+0x4E8(SB)/8, $0x0000000000808080 // digit test
DATA scanTab<>+0x4F0(SB)/8, $40 // swar shift
DATA scanTab<>+0x4F8(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x500(SB)/8, $0x00000000000000FF // nb 4 pt 1: low
DATA scanTab<>+0x508(SB)/8, $0x0000000000808080 // digit test
DATA scanTab<>+0x510(SB)/8, $40 // swar shift
DATA scanTab<>+0x518(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x520(SB)/8, $0x000000000000FFFF // nb 4 pt 2: low
DATA scanTab<>+0x528(SB)/8, $0x0000000000808080 // digit test
DATA scanTab<>+0x530(SB)/8, $40 // swar shift
DATA scanTab<>+0x538(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x540(SB)/8, $0x0000000000FFFFFF // nb 4 pt 3: low
DATA scanTab<>+0x548(SB)/8, $0x0000000000808080 // digit test
DATA scanTab<>+0x550(SB)/8, $40 // swar shift
DATA scanTab<>+0x558(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x560(SB)/8, $0x00000000FFFFFFFF // nb 4 pt 4: low
DATA scanTab<>+0x568(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x570(SB)/8, $32 // swar shift
DATA scanTab<>+0x578(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x580(SB)/8, $0x000000FFFFFFFFFF // nb 4 pt 5: low
DATA scanTab<>+0x588(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x590(SB)/8, $32 // swar shift
DATA scanTab<>+0x598(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 4 pt 6: low
DATA scanTab<>+0x5A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x5B0(SB)/8, $32 // swar shift
DATA scanTab<>+0x5B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 4 pt 7: low
DATA scanTab<>+0x5C8(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x5D0(SB)/8, $32 // swar shift
DATA scanTab<>+0x5D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5E0(SB)/8, $0x0000000000000000 // nb 5 pt 0: low
DATA scanTab<>+0x5E8(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x5F0(SB)/8, $32 // swar shift
DATA scanTab<>+0x5F8(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x600(SB)/8, $0x00000000000000FF // nb 5 pt 1: low
DATA scanTab<>+0x608(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x610(SB)/8, $32 // swar shift
DATA scanTab<>+0x618(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x620(SB)/8, $0x000000000000FFFF // nb 5 pt 2: low
DATA scanTab<>+0x628(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x630(SB)/8, $32 // swar shift
DATA scanTab<>+0x638(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x640(SB)/8, $0x0000000000FFFFFF // nb 5 pt 3: low
DATA scanTab<>+0x648(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x650(SB)/8, $32 // swar shift
DATA scanTab<>+0x658(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x660(SB)/8, $0x00000000FFFFFFFF // nb 5 pt 4: low
DATA scanTab<>+0x668(SB)/8, $0x0000000080808080 // digit test
DATA scanTab<>+0x670(SB)/8, $32 // swar shift
DATA scanTab<>+0x678(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x680(SB)/8, $0x000000FFFFFFFFFF // nb 5 pt 5: low
DATA scanTab<>+0x688(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x690(SB)/8, $24 // swar shift
DATA scanTab<>+0x698(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x6A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 5 pt 6: low
DATA scanTab<>+0x6A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x6B0(SB)/8, $24 // swar shift
DATA scanTab<>+0x6B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x6C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 5 pt 7: low
DATA scanTab<>+0x6C8(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x6D0(SB)/8, $24 // swar shift
DATA scanTab<>+0x6D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x6E0(SB)/8, $0x0000000000000000 // nb 6 pt 0: low
DATA scanTab<>+0x6E8(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x6F0(SB)/8, $24 // swar shift
DATA scanTab<>+0x6F8(SB)/8, $0x40F86A0000000000 // 1e5
DATA scanTab<>+0x700(SB)/8, $0x00000000000000FF // nb 6 pt 1: low
DATA scanTab<>+0x708(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x710(SB)/8, $24 // swar shift
DATA scanTab<>+0x718(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x720(SB)/8, $0x000000000000FFFF // nb 6 pt 2: low
DATA scanTab<>+0x728(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x730(SB)/8, $24 // swar shift
DATA scanTab<>+0x738(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x740(SB)/8, $0x0000000000FFFFFF // nb 6 pt 3: low
DATA scanTab<>+0x748(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x750(SB)/8, $24 // swar shift
DATA scanTab<>+0x758(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x760(SB)/8, $0x00000000FFFFFFFF // nb 6 pt 4: low
DATA scanTab<>+0x768(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x770(SB)/8, $24 // swar shift
DATA scanTab<>+0x778(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x780(SB)/8, $0x000000FFFFFFFFFF // nb 6 pt 5: low
DATA scanTab<>+0x788(SB)/8, $0x0000008080808080 // digit test
DATA scanTab<>+0x790(SB)/8, $24 // swar shift
DATA scanTab<>+0x798(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x7A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 6 pt 6: low
DATA scanTab<>+0x7A8(SB)/8, $0xFFFFFFFFFFFFFFFF // digit test
DATA scanTab<>+0x7B0(SB)/8, $16 // swar shift
DATA scanTab<>+0x7B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x7C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 6 pt 7: low
DATA scanTab<>+0x7C8(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x7D0(SB)/8, $16 // swar shift
DATA scanTab<>+0x7D8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x7E0(SB)/8, $0x0000000000000000 // nb 7 pt 0: low
DATA scanTab<>+0x7E8(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x7F0(SB)/8, $16 // swar shift
DATA scanTab<>+0x7F8(SB)/8, $0x412E848000000000 // 1e6
DATA scanTab<>+0x800(SB)/8, $0x00000000000000FF // nb 7 pt 1: low
DATA scanTab<>+0x808(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x810(SB)/8, $16 // swar shift
DATA scanTab<>+0x818(SB)/8, $0x40F86A0000000000 // 1e5
DATA scanTab<>+0x820(SB)/8, $0x000000000000FFFF // nb 7 pt 2: low
DATA scanTab<>+0x828(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x830(SB)/8, $16 // swar shift
DATA scanTab<>+0x838(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x840(SB)/8, $0x0000000000FFFFFF // nb 7 pt 3: low
DATA scanTab<>+0x848(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x850(SB)/8, $16 // swar shift
DATA scanTab<>+0x858(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x860(SB)/8, $0x00000000FFFFFFFF // nb 7 pt 4: low
DATA scanTab<>+0x868(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x870(SB)/8, $16 // swar shift
DATA scanTab<>+0x878(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x880(SB)/8, $0x000000FFFFFFFFFF // nb 7 pt 5: low
DATA scanTab<>+0x888(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x890(SB)/8, $16 // swar shift
DATA scanTab<>+0x898(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x8A0(SB)/8, $0x0000FFFFFFFFFFFF // nb 7 pt 6: low
DATA scanTab<>+0x8A8(SB)/8, $0x0000808080808080 // digit test
DATA scanTab<>+0x8B0(SB)/8, $16 // swar shift
DATA scanTab<>+0x8B8(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x8C0(SB)/8, $0x00FFFFFFFFFFFFFF // nb 7 pt 7: low
DATA scanTab<>+0x8C8(SB)/8, $0x0080808080808080 // digit test
DATA scanTab<>+0x8D0(SB)/8, $8 // swar shift
DATA scanTab<>+0x8D8(SB)/8, $0x3FF0000000000000 // 1e0
GLOBL scanTab<>(SB), RODATA|NOPTR, $0x8E0

// func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (int, int, int, int, int)
//
// scanWordsGo (fastrow.go) in amd64 assembly, step for step; see there.
// SI rec, DX len(rec)-8, AX i, R13 c, R14 vals, BX the constants; X1
// the sign bit of the cell; the rest is scratch.
TEXT ·scanWordsAsm(SB), NOSPLIT, $0-176
	MOVQ rec_base+0(FP), SI
	MOVQ rec_len+8(FP), DX
	SUBQ $8, DX
	MOVQ i+24(FP), AX
	MOVQ c+32(FP), R13
	MOVQ vals_base+56(FP), R14
	LEAQ scanTab<>(SB), BX
	MOVQ $0, others+152(FP)
	MOVQ $0, hits+160(FP)
	MOVQ $0, looked+168(FP)

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

	// The memo, when on: key = the cell's bytes | k<<56, slot
	// memo[(key·memoMul) >> (64-14)]; the slot (X3) and key (X2) are kept
	// for a miss to fill in.
	MOVQ memo+128(FP), R10
	TESTQ R10, R10
	JZ   parse
	MOVQ (BX)(R8*8), R11
	ANDQ R9, R11
	MOVQ R8, R12
	SHLQ $56, R12
	ORQ  R12, R11
	MOVQ R11, R12
	IMULQ 0xD8(BX), R12
	SHRQ $50, R12
	SHLQ $4, R12
	ADDQ R10, R12
	INCQ looked+168(FP)
	CMPQ R11, (R12)
	JNE  miss
	INCQ hits+160(FP)
	MOVSD 8(R12), X0
	JMP  value

miss:
	MOVQ R11, X2
	MOVQ R12, X3

parse:
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

	// pt (R12) = the point's byte, 7 when none (above the digits); a
	// second point stays in the digits and fails their test. R8 = the
	// shape's offset in the table.
	BTSQ $63, R12
	BSFQ R12, R12
	SHRQ $3, R12
	LEAQ (R12)(R8*8), R8
	SHLQ $5, R8

	// Squeeze the point out: x = x&low | (x>>8)&^low.
	MOVQ 0xE0(BX)(R8*1), R10
	MOVQ R9, CX
	SHRQ $8, CX
	ANDQ R10, R9
	NOTQ R10
	ANDQ R10, CX
	ORQ  CX, R9

	// The nd low bytes are digits: ((x & low7) + 0x76…) | x has no bit 7 there.
	MOVQ 0x68(BX), CX
	ANDQ R9, CX
	ADDQ 0x70(BX), CX
	ORQ  R9, CX
	ANDQ 0xE8(BX)(R8*1), CX
	JNZ  other

	// swarValue(x, nd).
	MOVQ 0xF0(BX)(R8*1), CX
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
	DIVSD 0xF8(BX)(R8*1), X0
	PXOR X1, X0
	MOVQ memo+128(FP), R10
	TESTQ R10, R10
	JZ   value
	MOVQ X3, R12
	MOVQ X2, (R12)
	MOVSD X0, 8(R12)

value:
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
	INCQ others+152(FP)
	INCQ R13
	JMP  loop

blank:
	MOVQ st_base+80(FP), R11
	MOVB $0, (R11)(R13*1)
	INCQ others+152(FP)
	INCQ R13
	JMP  loop

done:
	MOVQ AX, i1+136(FP)
	MOVQ R13, c1+144(FP)
	RET
