/*
 * The shortest decimal text of a double that reads back as exactly it
 * (lt_format_shortest, lantern/text.h), by Grisu2: F. Loitsch 2010,
 * "Printing floating-point numbers quickly and accurately with integers",
 * PLDI '10, section 5 (the narrowed boundaries, digit generation and the
 * rounding step "round_weed" without its check). All in 64-bit integers:
 * about twenty times faster than trying printf's %.15g to %.17g and reading
 * each back, which is what made the chain files slow to write.
 *
 * Grisu2 always yields digits inside v's rounding interval (narrowed by one
 * unit of the 64-bit products' error), so they always read back as v; in a
 * small share of cases (about 0.1% in Loitsch's tests) a shorter string
 * would also have done. Never more than 17 significant digits.
 */
#include "lantern/text.h"

#include <math.h>
#include <stdint.h>
#include <string.h>

typedef struct {
    uint64_t f;
    int e;
} diyfp; /* f * 2^e */

/* The upper 64 bits of the 128-bit product, rounded (the paper's "multiply"). */
static diyfp mul(diyfp x, diyfp y)
{
    unsigned __int128 p = (unsigned __int128)x.f * y.f;
    uint64_t h = (uint64_t)(p >> 64), l = (uint64_t)p;
    return (diyfp){h + (l >> 63), x.e + y.e + 64};
}

static diyfp normalize(diyfp x)
{
    int s = __builtin_clzll(x.f);
    return (diyfp){x.f << s, x.e - s};
}

/* 10^k for k = -300, -292, ..., 324 as f * 2^e, f the 64-bit significand
 * rounded to nearest: made by scripts/gen_pow10.py in exact rationals. */
static const struct {
    uint64_t f;
    int e, k;
} pow10_cache[] = {
    {0xAB70FE17C79AC6CAULL, -1060, -300},
    {0xFF77B1FCBEBCDC4FULL, -1034, -292},
    {0xBE5691EF416BD60CULL, -1007, -284},
    {0x8DD01FAD907FFC3CULL, -980, -276},
    {0xD3515C2831559A83ULL, -954, -268},
    {0x9D71AC8FADA6C9B5ULL, -927, -260},
    {0xEA9C227723EE8BCBULL, -901, -252},
    {0xAECC49914078536DULL, -874, -244},
    {0x823C12795DB6CE57ULL, -847, -236},
    {0xC21094364DFB5637ULL, -821, -228},
    {0x9096EA6F3848984FULL, -794, -220},
    {0xD77485CB25823AC7ULL, -768, -212},
    {0xA086CFCD97BF97F4ULL, -741, -204},
    {0xEF340A98172AACE5ULL, -715, -196},
    {0xB23867FB2A35B28EULL, -688, -188},
    {0x84C8D4DFD2C63F3BULL, -661, -180},
    {0xC5DD44271AD3CDBAULL, -635, -172},
    {0x936B9FCEBB25C996ULL, -608, -164},
    {0xDBAC6C247D62A584ULL, -582, -156},
    {0xA3AB66580D5FDAF6ULL, -555, -148},
    {0xF3E2F893DEC3F126ULL, -529, -140},
    {0xB5B5ADA8AAFF80B8ULL, -502, -132},
    {0x87625F056C7C4A8BULL, -475, -124},
    {0xC9BCFF6034C13053ULL, -449, -116},
    {0x964E858C91BA2655ULL, -422, -108},
    {0xDFF9772470297EBDULL, -396, -100},
    {0xA6DFBD9FB8E5B88FULL, -369, -92},
    {0xF8A95FCF88747D94ULL, -343, -84},
    {0xB94470938FA89BCFULL, -316, -76},
    {0x8A08F0F8BF0F156BULL, -289, -68},
    {0xCDB02555653131B6ULL, -263, -60},
    {0x993FE2C6D07B7FACULL, -236, -52},
    {0xE45C10C42A2B3B06ULL, -210, -44},
    {0xAA242499697392D3ULL, -183, -36},
    {0xFD87B5F28300CA0EULL, -157, -28},
    {0xBCE5086492111AEBULL, -130, -20},
    {0x8CBCCC096F5088CCULL, -103, -12},
    {0xD1B71758E219652CULL, -77, -4},
    {0x9C40000000000000ULL, -50, 4},
    {0xE8D4A51000000000ULL, -24, 12},
    {0xAD78EBC5AC620000ULL, 3, 20},
    {0x813F3978F8940984ULL, 30, 28},
    {0xC097CE7BC90715B3ULL, 56, 36},
    {0x8F7E32CE7BEA5C70ULL, 83, 44},
    {0xD5D238A4ABE98068ULL, 109, 52},
    {0x9F4F2726179A2245ULL, 136, 60},
    {0xED63A231D4C4FB27ULL, 162, 68},
    {0xB0DE65388CC8ADA8ULL, 189, 76},
    {0x83C7088E1AAB65DBULL, 216, 84},
    {0xC45D1DF942711D9AULL, 242, 92},
    {0x924D692CA61BE758ULL, 269, 100},
    {0xDA01EE641A708DEAULL, 295, 108},
    {0xA26DA3999AEF774AULL, 322, 116},
    {0xF209787BB47D6B85ULL, 348, 124},
    {0xB454E4A179DD1877ULL, 375, 132},
    {0x865B86925B9BC5C2ULL, 402, 140},
    {0xC83553C5C8965D3DULL, 428, 148},
    {0x952AB45CFA97A0B3ULL, 455, 156},
    {0xDE469FBD99A05FE3ULL, 481, 164},
    {0xA59BC234DB398C25ULL, 508, 172},
    {0xF6C69A72A3989F5CULL, 534, 180},
    {0xB7DCBF5354E9BECEULL, 561, 188},
    {0x88FCF317F22241E2ULL, 588, 196},
    {0xCC20CE9BD35C78A5ULL, 614, 204},
    {0x98165AF37B2153DFULL, 641, 212},
    {0xE2A0B5DC971F303AULL, 667, 220},
    {0xA8D9D1535CE3B396ULL, 694, 228},
    {0xFB9B7CD9A4A7443CULL, 720, 236},
    {0xBB764C4CA7A44410ULL, 747, 244},
    {0x8BAB8EEFB6409C1AULL, 774, 252},
    {0xD01FEF10A657842CULL, 800, 260},
    {0x9B10A4E5E9913129ULL, 827, 268},
    {0xE7109BFBA19C0C9DULL, 853, 276},
    {0xAC2820D9623BF429ULL, 880, 284},
    {0x80444B5E7AA7CF85ULL, 907, 292},
    {0xBF21E44003ACDD2DULL, 933, 300},
    {0x8E679C2F5E44FF8FULL, 960, 308},
    {0xD433179D9C8CB841ULL, 986, 316},
    {0x9E19DB92B4E31BA9ULL, 1013, 324},
};
enum { NPOW = sizeof pow10_cache / sizeof pow10_cache[0] };

/* The window the scaled value's binary exponent must land in (the paper's
 * alpha and gamma): its integral part then fits in 32 bits. */
enum { ALPHA = -60, GAMMA = -32 };

/* The digits of v > 0 (finite) into buf, none of them trailing zeros but
 * the value's own; returns their count and sets *dexp, v = digits * 10^dexp. */
static int grisu2(double v, char *buf, int *dexp)
{
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    uint64_t F = bits & ((UINT64_C(1) << 52) - 1);
    int E = (int)(bits >> 52);
    diyfp w = E ? (diyfp){F | (UINT64_C(1) << 52), E - 1075} : (diyfp){F, -1074};
    /* the boundaries halfway to the neighbours; the lower one is nearer
     * where the significand is a power of two (not for the smallest normal) */
    diyfp mp = normalize((diyfp){2 * w.f + 1, w.e - 1});
    diyfp mm = F == 0 && E > 1 ? (diyfp){4 * w.f - 1, w.e - 2} : (diyfp){2 * w.f - 1, w.e - 1};
    mm = (diyfp){mm.f << (mm.e - mp.e), mp.e};
    w = normalize(w);
    /* the cached power c = 10^-k that puts mp's exponent in [ALPHA, GAMMA] */
    int want = ALPHA - mp.e - 64; /* c.e must be at least this */
    int i = (int)((double)(want + 63) * 0.30102999566398114 + 300.0) / 8;
    i = i < 0 ? 0 : i >= NPOW ? NPOW - 1 : i;
    while (i > 0 && pow10_cache[i - 1].e >= want)
        i--;
    while (i < NPOW - 1 && pow10_cache[i].e < want)
        i++;
    diyfp c = {pow10_cache[i].f, pow10_cache[i].e};
    diyfp W = mul(w, c), Wp = mul(mp, c), Wm = mul(mm, c);
    Wp.f--, Wm.f++; /* each product is off by up to one unit: stay inside */
    uint64_t delta = Wp.f - Wm.f, dist = Wp.f - W.f;
    int sh = -Wp.e;
    uint64_t one = UINT64_C(1) << sh;
    uint32_t p1 = (uint32_t)(Wp.f >> sh);
    uint64_t p2 = Wp.f & (one - 1);
    /* the integral digits of the upper boundary, then the fractional ones,
     * until what is left of it is within delta */
    uint32_t pw = 1;
    int kd = 1;
    while (pw <= p1 / 10)
        pw *= 10, kd++;
    int len = 0, exp10 = -pow10_cache[i].k;
    uint64_t rest, unit;
    for (;;) {
        if (kd > 0) {
            buf[len++] = (char)('0' + p1 / pw);
            p1 %= pw;
            kd--;
            rest = ((uint64_t)p1 << sh) + p2;
            unit = (uint64_t)pw << sh;
            if (rest <= delta) {
                exp10 += kd;
                break;
            }
            pw /= 10;
            continue;
        }
        p2 *= 10, delta *= 10, dist *= 10;
        buf[len++] = (char)('0' + (p2 >> sh));
        p2 &= one - 1;
        exp10--;
        if (p2 <= delta) {
            rest = p2, unit = one;
            break;
        }
    }
    /* step the last digit down towards v while that stays inside and comes
     * closer (the paper's round_weed) */
    while (rest < dist && delta - rest >= unit &&
           (rest + unit < dist || dist - rest > rest + unit - dist)) {
        buf[len - 1]--;
        rest += unit;
    }
    *dexp = exp10;
    return len;
}

size_t lt_format_shortest(double v, char *out)
{
    char *o = out;
    if (!isfinite(v)) {
        strcpy(out, isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
        return strlen(out);
    }
    if (signbit(v))
        *o++ = '-', v = -v;
    if (v == 0) {
        *o++ = '0', *o = '\0';
        return (size_t)(o - out);
    }
    char d[24];
    int dexp, n = grisu2(v, d, &dexp);
    while (n > 1 && d[n - 1] == '0')
        n--, dexp++;
    int point = n + dexp; /* digits before the decimal point */
    if (point >= -3 && point <= 17) {
        /* as printf's %.17g: plain notation from 1e-4 up to below 1e17 */
        if (point <= 0) {
            *o++ = '0', *o++ = '.';
            for (int z = 0; z < -point; z++)
                *o++ = '0';
            memcpy(o, d, (size_t)n), o += n;
        } else if (point >= n) {
            memcpy(o, d, (size_t)n), o += n;
            for (int z = n; z < point; z++)
                *o++ = '0';
        } else {
            memcpy(o, d, (size_t)point), o += point;
            *o++ = '.';
            memcpy(o, d + point, (size_t)(n - point)), o += n - point;
        }
    } else {
        /* d.ddde+XX, at least two digits of exponent, as printf */
        int x = point - 1;
        *o++ = d[0];
        if (n > 1) {
            *o++ = '.';
            memcpy(o, d + 1, (size_t)(n - 1)), o += n - 1;
        }
        *o++ = 'e', *o++ = x < 0 ? '-' : '+';
        x = x < 0 ? -x : x;
        if (x >= 100)
            *o++ = (char)('0' + x / 100);
        *o++ = (char)('0' + x / 10 % 10), *o++ = (char)('0' + x % 10);
    }
    *o = '\0';
    return (size_t)(o - out);
}
