/*
 * lantern/digest.h - FNV-1a digests (64 bits).
 *
 * FNV-1a (Fowler, Noll and Vo; the offset basis and prime of its published
 * definition) is not a cryptographic hash: lantern uses it to tell files
 * and runs apart (checkpoint fingerprints, the data digest of summaries,
 * campaign files) and to detect a damaged checkpoint, never against an
 * adversary. Digests are of bytes as held in memory, so they are the same
 * on every run of the same build on one machine; they are stored and
 * compared, never derived from anything but the bytes given.
 */
#ifndef LANTERN_DIGEST_H
#define LANTERN_DIGEST_H

#include <stddef.h>
#include <stdint.h>

/* The state of an empty digest (FNV's 64-bit offset basis). */
#define LT_DIGEST_START 0xCBF29CE484222325ull

/* Add n bytes at p to the digest *h. */
void lt_digest_add(uint64_t *h, const void *p, size_t n);

#endif
