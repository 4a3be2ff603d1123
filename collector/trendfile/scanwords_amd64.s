//go:build !purego

#include "textflag.h"

// Constants of scanWordsAsm: keepBytes[0..8], byte patterns, 16-byte
// vector constants (two equal halves), lowBits[0..8] = 2^n - 1, and the
// cell shapes.
// Shapes at 0x128, 32 bytes per (nb, pt) = (bytes after the sign, the
// lowest point byte of the word or 7 for none; a point at or after byte
// nb is not in the cell): the squeeze mask keepBytes[pt], the digit test
// (the PMOVMSKB bits of the nd digit bytes; 0xFF00 when nd = 0: bytes
// 8..14 of the test vector always have bit 7 set, so the test fails), the
// swarValue shift 8·(8-nd) and 10^frac.
DATA scanTab<>+0x000(SB)/8, $0x0000000000000000 // keepBytes[0]
DATA scanTab<>+0x008(SB)/8, $0x00000000000000FF
DATA scanTab<>+0x010(SB)/8, $0x000000000000FFFF
DATA scanTab<>+0x018(SB)/8, $0x0000000000FFFFFF
DATA scanTab<>+0x020(SB)/8, $0x00000000FFFFFFFF
DATA scanTab<>+0x028(SB)/8, $0x000000FFFFFFFFFF
DATA scanTab<>+0x030(SB)/8, $0x0000FFFFFFFFFFFF
DATA scanTab<>+0x038(SB)/8, $0x00FFFFFFFFFFFFFF
DATA scanTab<>+0x040(SB)/8, $0xFFFFFFFFFFFFFFFF // keepBytes[8]
DATA scanTab<>+0x048(SB)/8, $0x0101010101010101 // ones8
DATA scanTab<>+0x050(SB)/8, $0x8080808080808080 // high8
DATA scanTab<>+0x060(SB)/8, $0x3030303030303030 // '0' bytes
DATA scanTab<>+0x068(SB)/8, $0x3030303030303030
DATA scanTab<>+0x070(SB)/8, $0x2E2E2E2E2E2E2E2E // '.' bytes
DATA scanTab<>+0x078(SB)/8, $0x2E2E2E2E2E2E2E2E
DATA scanTab<>+0x080(SB)/8, $0x7676767676767676 // 0x80 - 10 bytes
DATA scanTab<>+0x088(SB)/8, $0x7676767676767676
DATA scanTab<>+0x090(SB)/8, $0x0001000A0001000A // words 10, 1
DATA scanTab<>+0x098(SB)/8, $0x0001000A0001000A
DATA scanTab<>+0x0A0(SB)/8, $0x0001006400010064 // words 100, 1
DATA scanTab<>+0x0A8(SB)/8, $0x0001006400010064
DATA scanTab<>+0x0B0(SB)/8, $0x0000000000002710 // 10000 (low qword)
DATA scanTab<>+0x0B8(SB)/8, $0x0000000000002710
DATA scanTab<>+0x0D0(SB)/8, $0x8000000000000000 // sign bit
DATA scanTab<>+0x0D8(SB)/8, $0x9E3779B97F4A7C15 // memoMul
DATA scanTab<>+0x0E0(SB)/8, $0x0000000000000000 // lowBits[0..8]
DATA scanTab<>+0x0E8(SB)/8, $0x0000000000000001
DATA scanTab<>+0x0F0(SB)/8, $0x0000000000000003
DATA scanTab<>+0x0F8(SB)/8, $0x0000000000000007
DATA scanTab<>+0x100(SB)/8, $0x000000000000000F
DATA scanTab<>+0x108(SB)/8, $0x000000000000001F
DATA scanTab<>+0x110(SB)/8, $0x000000000000003F
DATA scanTab<>+0x118(SB)/8, $0x000000000000007F
DATA scanTab<>+0x120(SB)/8, $0x00000000000000FF
DATA scanTab<>+0x128(SB)/8, $0x0000000000000000 // nb 0 pt 0: low
DATA scanTab<>+0x130(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x138(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x140(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x148(SB)/8, $0x00000000000000FF // nb 0 pt 1: low
DATA scanTab<>+0x150(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x158(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x160(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x168(SB)/8, $0x000000000000FFFF // nb 0 pt 2: low
DATA scanTab<>+0x170(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x178(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x180(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x188(SB)/8, $0x0000000000FFFFFF // nb 0 pt 3: low
DATA scanTab<>+0x190(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x198(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x1A0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1A8(SB)/8, $0x00000000FFFFFFFF // nb 0 pt 4: low
DATA scanTab<>+0x1B0(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x1B8(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x1C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1C8(SB)/8, $0x000000FFFFFFFFFF // nb 0 pt 5: low
DATA scanTab<>+0x1D0(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x1D8(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x1E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x1E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 0 pt 6: low
DATA scanTab<>+0x1F0(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x1F8(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x200(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x208(SB)/8, $0x00FFFFFFFFFFFFFF // nb 0 pt 7: low
DATA scanTab<>+0x210(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x218(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x220(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x228(SB)/8, $0x0000000000000000 // nb 1 pt 0: low
DATA scanTab<>+0x230(SB)/8, $0x000000000000FF00 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x238(SB)/8, $0x0000000000000000 // swar shift
DATA scanTab<>+0x240(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x248(SB)/8, $0x00000000000000FF // nb 1 pt 1: low
DATA scanTab<>+0x250(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x258(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x260(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x268(SB)/8, $0x000000000000FFFF // nb 1 pt 2: low
DATA scanTab<>+0x270(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x278(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x280(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x288(SB)/8, $0x0000000000FFFFFF // nb 1 pt 3: low
DATA scanTab<>+0x290(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x298(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x2A0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2A8(SB)/8, $0x00000000FFFFFFFF // nb 1 pt 4: low
DATA scanTab<>+0x2B0(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x2B8(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x2C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2C8(SB)/8, $0x000000FFFFFFFFFF // nb 1 pt 5: low
DATA scanTab<>+0x2D0(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x2D8(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x2E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x2E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 1 pt 6: low
DATA scanTab<>+0x2F0(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x2F8(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x300(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x308(SB)/8, $0x00FFFFFFFFFFFFFF // nb 1 pt 7: low
DATA scanTab<>+0x310(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x318(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x320(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x328(SB)/8, $0x0000000000000000 // nb 2 pt 0: low
DATA scanTab<>+0x330(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x338(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x340(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x348(SB)/8, $0x00000000000000FF // nb 2 pt 1: low
DATA scanTab<>+0x350(SB)/8, $0x0000000000000001 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x358(SB)/8, $0x0000000000000038 // swar shift
DATA scanTab<>+0x360(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x368(SB)/8, $0x000000000000FFFF // nb 2 pt 2: low
DATA scanTab<>+0x370(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x378(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x380(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x388(SB)/8, $0x0000000000FFFFFF // nb 2 pt 3: low
DATA scanTab<>+0x390(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x398(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x3A0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3A8(SB)/8, $0x00000000FFFFFFFF // nb 2 pt 4: low
DATA scanTab<>+0x3B0(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x3B8(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x3C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3C8(SB)/8, $0x000000FFFFFFFFFF // nb 2 pt 5: low
DATA scanTab<>+0x3D0(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x3D8(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x3E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x3E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 2 pt 6: low
DATA scanTab<>+0x3F0(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x3F8(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x400(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x408(SB)/8, $0x00FFFFFFFFFFFFFF // nb 2 pt 7: low
DATA scanTab<>+0x410(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x418(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x420(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x428(SB)/8, $0x0000000000000000 // nb 3 pt 0: low
DATA scanTab<>+0x430(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x438(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x440(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x448(SB)/8, $0x00000000000000FF // nb 3 pt 1: low
DATA scanTab<>+0x450(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x458(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x460(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x468(SB)/8, $0x000000000000FFFF // nb 3 pt 2: low
DATA scanTab<>+0x470(SB)/8, $0x0000000000000003 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x478(SB)/8, $0x0000000000000030 // swar shift
DATA scanTab<>+0x480(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x488(SB)/8, $0x0000000000FFFFFF // nb 3 pt 3: low
DATA scanTab<>+0x490(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x498(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x4A0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4A8(SB)/8, $0x00000000FFFFFFFF // nb 3 pt 4: low
DATA scanTab<>+0x4B0(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x4B8(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x4C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4C8(SB)/8, $0x000000FFFFFFFFFF // nb 3 pt 5: low
DATA scanTab<>+0x4D0(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x4D8(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x4E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x4E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 3 pt 6: low
DATA scanTab<>+0x4F0(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x4F8(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x500(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x508(SB)/8, $0x00FFFFFFFFFFFFFF // nb 3 pt 7: low
DATA scanTab<>+0x510(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x518(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x520(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x528(SB)/8, $0x0000000000000000 // nb 4 pt 0: low
DATA scanTab<>+0x530(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x538(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x540(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x548(SB)/8, $0x00000000000000FF // nb 4 pt 1: low
DATA scanTab<>+0x550(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x558(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x560(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x568(SB)/8, $0x000000000000FFFF // nb 4 pt 2: low
DATA scanTab<>+0x570(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x578(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x580(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x588(SB)/8, $0x0000000000FFFFFF // nb 4 pt 3: low
DATA scanTab<>+0x590(SB)/8, $0x0000000000000007 // digit test (PMOVMSKB bits)
DATA scanTab<>+0x598(SB)/8, $0x0000000000000028 // swar shift
DATA scanTab<>+0x5A0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5A8(SB)/8, $0x00000000FFFFFFFF // nb 4 pt 4: low
DATA scanTab<>+0x5B0(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x5B8(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x5C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5C8(SB)/8, $0x000000FFFFFFFFFF // nb 4 pt 5: low
DATA scanTab<>+0x5D0(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x5D8(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x5E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x5E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 4 pt 6: low
DATA scanTab<>+0x5F0(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x5F8(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x600(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x608(SB)/8, $0x00FFFFFFFFFFFFFF // nb 4 pt 7: low
DATA scanTab<>+0x610(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x618(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x620(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x628(SB)/8, $0x0000000000000000 // nb 5 pt 0: low
DATA scanTab<>+0x630(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x638(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x640(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x648(SB)/8, $0x00000000000000FF // nb 5 pt 1: low
DATA scanTab<>+0x650(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x658(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x660(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x668(SB)/8, $0x000000000000FFFF // nb 5 pt 2: low
DATA scanTab<>+0x670(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x678(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x680(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x688(SB)/8, $0x0000000000FFFFFF // nb 5 pt 3: low
DATA scanTab<>+0x690(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x698(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x6A0(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x6A8(SB)/8, $0x00000000FFFFFFFF // nb 5 pt 4: low
DATA scanTab<>+0x6B0(SB)/8, $0x000000000000000F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x6B8(SB)/8, $0x0000000000000020 // swar shift
DATA scanTab<>+0x6C0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x6C8(SB)/8, $0x000000FFFFFFFFFF // nb 5 pt 5: low
DATA scanTab<>+0x6D0(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x6D8(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x6E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x6E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 5 pt 6: low
DATA scanTab<>+0x6F0(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x6F8(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x700(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x708(SB)/8, $0x00FFFFFFFFFFFFFF // nb 5 pt 7: low
DATA scanTab<>+0x710(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x718(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x720(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x728(SB)/8, $0x0000000000000000 // nb 6 pt 0: low
DATA scanTab<>+0x730(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x738(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x740(SB)/8, $0x40F86A0000000000 // 1e5
DATA scanTab<>+0x748(SB)/8, $0x00000000000000FF // nb 6 pt 1: low
DATA scanTab<>+0x750(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x758(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x760(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x768(SB)/8, $0x000000000000FFFF // nb 6 pt 2: low
DATA scanTab<>+0x770(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x778(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x780(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x788(SB)/8, $0x0000000000FFFFFF // nb 6 pt 3: low
DATA scanTab<>+0x790(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x798(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x7A0(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x7A8(SB)/8, $0x00000000FFFFFFFF // nb 6 pt 4: low
DATA scanTab<>+0x7B0(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x7B8(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x7C0(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x7C8(SB)/8, $0x000000FFFFFFFFFF // nb 6 pt 5: low
DATA scanTab<>+0x7D0(SB)/8, $0x000000000000001F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x7D8(SB)/8, $0x0000000000000018 // swar shift
DATA scanTab<>+0x7E0(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x7E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 6 pt 6: low
DATA scanTab<>+0x7F0(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x7F8(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x800(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x808(SB)/8, $0x00FFFFFFFFFFFFFF // nb 6 pt 7: low
DATA scanTab<>+0x810(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x818(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x820(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x828(SB)/8, $0x0000000000000000 // nb 7 pt 0: low
DATA scanTab<>+0x830(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x838(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x840(SB)/8, $0x412E848000000000 // 1e6
DATA scanTab<>+0x848(SB)/8, $0x00000000000000FF // nb 7 pt 1: low
DATA scanTab<>+0x850(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x858(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x860(SB)/8, $0x40F86A0000000000 // 1e5
DATA scanTab<>+0x868(SB)/8, $0x000000000000FFFF // nb 7 pt 2: low
DATA scanTab<>+0x870(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x878(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x880(SB)/8, $0x40C3880000000000 // 1e4
DATA scanTab<>+0x888(SB)/8, $0x0000000000FFFFFF // nb 7 pt 3: low
DATA scanTab<>+0x890(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x898(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x8A0(SB)/8, $0x408F400000000000 // 1e3
DATA scanTab<>+0x8A8(SB)/8, $0x00000000FFFFFFFF // nb 7 pt 4: low
DATA scanTab<>+0x8B0(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x8B8(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x8C0(SB)/8, $0x4059000000000000 // 1e2
DATA scanTab<>+0x8C8(SB)/8, $0x000000FFFFFFFFFF // nb 7 pt 5: low
DATA scanTab<>+0x8D0(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x8D8(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x8E0(SB)/8, $0x4024000000000000 // 1e1
DATA scanTab<>+0x8E8(SB)/8, $0x0000FFFFFFFFFFFF // nb 7 pt 6: low
DATA scanTab<>+0x8F0(SB)/8, $0x000000000000003F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x8F8(SB)/8, $0x0000000000000010 // swar shift
DATA scanTab<>+0x900(SB)/8, $0x3FF0000000000000 // 1e0
DATA scanTab<>+0x908(SB)/8, $0x00FFFFFFFFFFFFFF // nb 7 pt 7: low
DATA scanTab<>+0x910(SB)/8, $0x000000000000007F // digit test (PMOVMSKB bits)
DATA scanTab<>+0x918(SB)/8, $0x0000000000000008 // swar shift
DATA scanTab<>+0x920(SB)/8, $0x3FF0000000000000 // 1e0
GLOBL scanTab<>(SB), RODATA|NOPTR, $0x928

// func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (int, int, int, int, int)
//
// scanWordsGo (fastrow.go) in amd64 assembly (SSE2), with the same
// results; two steps differ in how, not what:
//
// The delimiters are found for 64 bytes at a time (PCMPEQB, PMOVMSKB: a
// bit per byte, the window D) and taken lowest first; a cell's end is the
// lowest bit left, so finding it does not wait for the cell before (the
// word-at-a-time search of scanWordsGo chains every cell's load on the
// previous cell's end). A window starts at a cell start while at least 72
// bytes are left (so every cell in it has its eight bytes in rec), and is
// renewed when no delimiter is left within a cell's eight bytes and the
// cell starts more than 56 bytes into it; otherwise that is a longer
// cell. The last 72 bytes of a record are read a word at a time as in the
// Go form.
//
// The cell's conversion runs in an XMM register: the point found by
// PCMPEQB, squeezed out, the digit test per byte (PADDB: no carries
// between bytes), then swarValue's combination with PMADDWL (10·a + b in
// words, then 100·a + b) and PMULULQ (10000·a + b), and CVTPL2PD: the
// same integer, so the same correctly rounded quotient. The integer
// registers are left for finding cells, the memo and the stores.
//
// The memo counters are derived at the end: every cell read is looked up
// unless blank, and hits are lookups minus misses.
//
// SI rec, AX the next cell's start, DX the window's start, R12 its
// delimiter bits left, R13 c, R14 vals, DI st, BX the constants; R8 the
// cell's start and R10 its length in the cell steps.
TEXT ·scanWordsAsm(SB), NOSPLIT, $0-176
	MOVQ rec_base+0(FP), SI
	MOVQ i+24(FP), AX
	MOVQ c+32(FP), R13
	MOVQ vals_base+56(FP), R14
	MOVQ st_base+80(FP), DI
	LEAQ scanTab<>(SB), BX
	MOVQ $0, others+152(FP)
	MOVQ $0, hits+160(FP)   // misses while scanning
	MOVQ $0, looked+168(FP) // blanks while scanning
	MOVQ pat+48(FP), X5
	PUNPCKLQDQ X5, X5
	MOVOU 0x60(BX), X8
	MOVOU 0x70(BX), X9
	MOVOU 0x80(BX), X10
	MOVOU 0x90(BX), X11
	MOVOU 0xA0(BX), X12
	MOVOU 0xB0(BX), X13
	PXOR X14, X14
	LEAQ -64(AX), DX // no window yet
	XORL R12, R12

head:
	CMPQ R13, last+40(FP)
	JGE  done

	// The cell's delimiter is the lowest bit left (R9, then its byte).
	BSFQ R12, R9
	JZ   nodelim
	ADDQ DX, R9
	MOVQ R9, R10
	SUBQ AX, R10
	CMPQ R10, $8
	JAE  nodelim
	LEAQ -1(R12), R11
	ANDQ R11, R12
	MOVQ AX, R8
	LEAQ 1(R9), AX

cell:
	MOVQ pos_base+104(FP), R11
	MOVL R8, (R11)(R13*4)
	TESTQ R10, R10
	JZ   blank
	CMPQ memo+128(FP), $0
	JNE  lookup

parse:
	// X2 = the cell's word, X1 its sign bit, R10 the bytes after the sign.
	MOVQ (SI)(R8*1), X2
	PXOR X1, X1
	CMPB (SI)(R8*1), $0x2d
	JEQ  neg

unsigned:
	// pt (R11): the lowest '.' of the word, 7 when none.
	MOVO X2, X3
	PCMPEQB X9, X3
	PMOVMSKB X3, R11
	ORQ  $0x80, R11
	BSFQ R11, R11
	LEAQ (R11)(R10*8), R10
	SHLQ $5, R10 // the shape's offset

	// x = w - '0' per byte; squeeze the point out:
	// x = (x>>8) ^ ((x ^ (x>>8)) & keepBytes[pt]).
	PSUBB X8, X2
	MOVO X2, X3
	PSRLQ $8, X3
	MOVQ 0x128(BX)(R10*1), X4
	PXOR X3, X2
	PAND X4, X2
	PXOR X3, X2

	// The nd low bytes are 0..9: (x + 0x76) | x has no bit 7 there.
	MOVO X2, X3
	PADDB X10, X3
	POR  X2, X3
	PMOVMSKB X3, R11
	TESTQ 0x130(BX)(R10*1), R11
	JNZ  other

	// swarValue(x, nd): the digits to the top of the word (leading
	// zeros below), bytes to words, 10·a + b, 100·a + b, 10000·a + b.
	MOVQ 0x138(BX)(R10*1), X4
	PSLLQ X4, X2
	PUNPCKLBW X14, X2
	PMADDWL X11, X2
	PACKSSLW X2, X2
	PMADDWL X12, X2
	MOVO X2, X3
	PSRLQ $32, X3
	PMULULQ X13, X2
	PADDQ X3, X2

	// v = mantissa / 10^frac, with the sign bit.
	CVTPL2PD X2, X0
	DIVSD 0x140(BX)(R10*1), X0
	PXOR X1, X0
	CMPQ memo+128(FP), $0
	JEQ  value
	MOVQ X7, R11
	MOVQ X6, (R11)
	MOVSD X0, 8(R11)

value:
	MOVSD X0, (R14)(R13*8)
	MOVB $1, (DI)(R13*1)
	INCQ R13
	JMP  head

lookup:
	// key = the cell's bytes | k<<56, slot memo[(key·memoMul) >> (64-14)];
	// a miss keeps both (X6, X7) for the parse to fill in.
	MOVQ (SI)(R8*1), R9
	ANDQ (BX)(R10*8), R9
	MOVQ R10, CX
	SHLQ $56, CX
	ORQ  CX, R9
	MOVQ R9, CX
	IMULQ 0xD8(BX), CX
	SHRQ $50, CX
	SHLQ $4, CX
	ADDQ memo+128(FP), CX
	CMPQ R9, (CX)
	JNE  miss
	MOVSD 8(CX), X0
	JMP  value

miss:
	INCQ hits+160(FP)
	MOVQ R9, X6
	MOVQ CX, X7
	JMP  parse

neg:
	MOVSD 0xD0(BX), X1
	PSRLQ $8, X2
	DECQ R10
	JMP  unsigned

other:
	MOVB $2, (DI)(R13*1)
	INCQ others+152(FP)
	INCQ R13
	JMP  head

blank:
	MOVB $0, (DI)(R13*1)
	INCQ others+152(FP)
	INCQ looked+168(FP)
	INCQ R13
	JMP  head

nodelim:
	// No delimiter left within the cell's eight bytes: a longer cell,
	// unless the cell starts more than 56 bytes into the window.
	MOVQ AX, CX
	SUBQ DX, CX
	CMPQ CX, $56
	JBE  done

	// A new window at the cell's start, while 72 bytes are left.
	MOVQ rec_len+8(FP), R11
	SUBQ $72, R11
	CMPQ AX, R11
	JGT  tail
	MOVQ AX, DX
	MOVOU (SI)(AX*1), X3
	PCMPEQB X5, X3
	PMOVMSKB X3, R12
	MOVOU 16(SI)(AX*1), X3
	PCMPEQB X5, X3
	PMOVMSKB X3, R11
	SHLQ $16, R11
	ORQ  R11, R12
	MOVOU 32(SI)(AX*1), X3
	PCMPEQB X5, X3
	PMOVMSKB X3, R11
	SHLQ $32, R11
	ORQ  R11, R12
	MOVOU 48(SI)(AX*1), X3
	PCMPEQB X5, X3
	PMOVMSKB X3, R11
	SHLQ $48, R11
	ORQ  R11, R12
	JMP  head

tail:
	// The record's last 72 bytes, a word at a time (scanWordsGo's step):
	// the first delimiter byte of (x - ones8) &^ x & high8, x = w ^ pat.
	// No window: D stays empty, so every cell comes here.
	XORL R12, R12
	MOVQ rec_len+8(FP), R11
	SUBQ $8, R11
	CMPQ AX, R11
	JGT  done
	MOVQ (SI)(AX*1), R9
	XORQ pat+48(FP), R9
	MOVQ R9, R10
	SUBQ 0x48(BX), R10
	NOTQ R9
	ANDQ R9, R10
	ANDQ 0x50(BX), R10
	JZ   done
	BSFQ R10, R10
	SHRQ $3, R10
	MOVQ AX, R8
	LEAQ 1(AX)(R10*1), AX
	JMP  cell

done:
	MOVQ AX, i1+136(FP)
	MOVQ R13, c1+144(FP)
	// looked = cells read - blanks (with the memo), hits = looked - misses.
	MOVQ $0, R9
	CMPQ memo+128(FP), $0
	JEQ  counts
	MOVQ R13, R9
	SUBQ c+32(FP), R9
	SUBQ looked+168(FP), R9
counts:
	MOVQ R9, looked+168(FP)
	SUBQ hits+160(FP), R9
	MOVQ R9, hits+160(FP)
	RET
