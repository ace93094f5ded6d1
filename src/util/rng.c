/* Random streams: see include/lantern/rng.h. */
#include <math.h>

#include "lantern/rng.h"

/* splitmix64 (Steele, Lea & Flood 2014): a good mixer for seeding. */
static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

void lt_rng_seed(lt_rng *r, uint64_t seed, uint64_t stream)
{
    /* Mix the stream into the seed first, so that (seed, 1) and (seed + 1,
     * 0) give unrelated streams. */
    uint64_t x = seed;
    uint64_t a = splitmix64(&x);
    x = a ^ (stream * 0xD1B54A32D192ED03ull + 0x8CB92BA72F3D8DD7ull);
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&x);
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

uint64_t lt_rng_next(lt_rng *r)
{
    uint64_t *s = r->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9, t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

double lt_rng_uniform(lt_rng *r) { return (double)(lt_rng_next(r) >> 11) * 0x1.0p-53; }

double lt_rng_normal(lt_rng *r)
{
    /* Box-Muller with u1 in (0, 1]; one value per call keeps the state a
     * plain function of the number of calls. */
    double u1 = 1.0 - lt_rng_uniform(r), u2 = lt_rng_uniform(r);
    return sqrt(-2.0 * log(u1)) * cos(2.0 * M_PI * u2);
}
