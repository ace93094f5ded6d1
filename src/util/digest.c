/* FNV-1a digests: see include/lantern/digest.h. */
#include "lantern/digest.h"

#define FNV_PRIME 0x100000001B3ull /* FNV's 64-bit prime, 2^40 + 2^8 + 0xb3 */

void lt_digest_add(uint64_t *h, const void *p, size_t n)
{
    const unsigned char *b = p;
    uint64_t x = *h;
    for (size_t i = 0; i < n; i++)
        x = (x ^ b[i]) * FNV_PRIME;
    *h = x;
}
