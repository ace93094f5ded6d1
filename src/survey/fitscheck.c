/*
 * A check of FITS headers before CFITSIO reads them, and the clean-up of a
 * failed open.
 *
 * Fuzzing found that CFITSIO 4.2 (Debian 12) aborts the whole process, in a
 * fortified strcpy, when a table's TTYPEn card holds an unquoted value that
 * fills the card. A reader must refuse such a file, not die, so every FITS
 * header is scanned here first, to the rules of the FITS Standard 4.0
 * (Pence et al. 2010, A&A 524, A42, and the 2016 text of version 4.0):
 * header cards are 80 ASCII characters 0x20-0x7E (sect. 4.1.1), the header
 * ends with END in its 2880-byte blocks (sect. 3.3), and the string-valued
 * reserved keywords (XTENSION, EXTNAME, TTYPEn, TFORMn, TUNITn, TDISPn,
 * TDIMn) hold a quoted string that closes on its card (sect. 4.2.1). The
 * data part is skipped by its size, |BITPIX|/8 GCOUNT (PCOUNT + NAXIS1 ...
 * NAXISm) (sect. 4.4.1.1, eq. 2). Compressed files (.gz) are left to
 * CFITSIO: their bytes are not the FITS text.
 */
#include <ctype.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

#define BLOCK 2880
#define CARD 80
#define HDUS_MAX 10000

static int keyword_is(const char *card, const char *name)
{
    size_t n = strlen(name);
    return strncmp(card, name, n) == 0;
}

/* Reserved keywords whose value must be a string: a name, or a name
 * followed by a field number. */
static int string_keyword(const char *card)
{
    static const char *plain[] = {"XTENSION", "EXTNAME "};
    static const char *indexed[] = {"TTYPE", "TFORM", "TUNIT", "TDISP", "TDIM"};
    for (size_t i = 0; i < sizeof plain / sizeof plain[0]; i++)
        if (keyword_is(card, plain[i]))
            return 1;
    for (size_t i = 0; i < sizeof indexed / sizeof indexed[0]; i++) {
        size_t n = strlen(indexed[i]);
        if (strncmp(card, indexed[i], n) == 0 && isdigit((unsigned char)card[n]))
            return 1;
    }
    return 0;
}

/* The integer value of a card (columns 11-30), or -1 if it has none. */
static long long card_int(const char *card)
{
    char v[71];
    memcpy(v, card + 10, 70);
    v[70] = '\0';
    char *end;
    errno = 0;
    long long x = strtoll(v, &end, 10);
    if (end == v || errno)
        return -1;
    return x;
}

/* lt_fits_check of the file name, its [extension] part taken off. */
static int check_file(const char *name, lt_error *err)
{
    size_t n = strlen(name);
    if (n >= 3 && strcasecmp(name + n - 3, ".gz") == 0)
        return LT_OK;
    FILE *f = fopen(name, "rb");
    if (!f)
        return LT_OK; /* CFITSIO says why it cannot open it */
    char block[BLOCK];
    int rc = LT_OK;
    for (int hdu = 1; hdu <= HDUS_MAX && rc == LT_OK; hdu++) {
        long long bitpix = 0, naxis = 0, pcount = 0, gcount = 1, prod = 1;
        int ended = 0, card_no = 0;
        while (!ended) {
            size_t got = fread(block, 1, BLOCK, f);
            if (got == 0 && card_no == 0 && hdu > 1)
                goto done; /* the file ends after a whole HDU */
            if (got < BLOCK) {
                rc = lt_error_set(err, LT_EINPUT, name, 0,
                                  "not a valid FITS file: HDU %d's header is truncated (no END "
                                  "card in whole 2880-byte blocks)",
                                  hdu);
                goto done;
            }
            for (int c = 0; c < BLOCK / CARD && !ended; c++) {
                const char *card = block + c * CARD;
                card_no++;
                for (int i = 0; i < CARD; i++)
                    if ((unsigned char)card[i] < 0x20 || (unsigned char)card[i] > 0x7E) {
                        rc = lt_error_set(err, LT_EINPUT, name, 0,
                                          "not a valid FITS file: HDU %d, header card %d holds a "
                                          "byte 0x%02X that is not printable ASCII",
                                          hdu, card_no, (unsigned char)card[i]);
                        goto done;
                    }
                if (strncmp(card, "END     ", 8) == 0) {
                    ended = 1;
                    break;
                }
                int valued = card[8] == '=' && card[9] == ' ';
                if (valued && string_keyword(card)) {
                    const char *v = card + 10, *stop = card + CARD;
                    while (v < stop && *v == ' ')
                        v++;
                    const char *close = v < stop && *v == '\'' ? memchr(v + 1, '\'', (size_t)(stop - v - 1)) : NULL;
                    if (!close) {
                        rc = lt_error_set(err, LT_EINPUT, name, 0,
                                          "not a valid FITS file: HDU %d, header card %d "
                                          "(%.8s) must hold a quoted string on its card",
                                          hdu, card_no, card);
                        goto done;
                    }
                }
                if (!valued)
                    continue;
                long long x = card_int(card);
                if (keyword_is(card, "BITPIX  "))
                    bitpix = x;
                else if (keyword_is(card, "NAXIS   "))
                    naxis = x;
                else if (keyword_is(card, "PCOUNT  "))
                    pcount = x;
                else if (keyword_is(card, "GCOUNT  "))
                    gcount = x;
                else if (keyword_is(card, "NAXIS") && isdigit((unsigned char)card[5])) {
                    if (x < 0 || (x > 0 && prod > (1LL << 50) / x))
                        prod = -1;
                    else if (prod >= 0)
                        prod *= x;
                }
            }
        }
        long long bytes = 0;
        if (naxis > 0) {
            long long b = bitpix < 0 ? -bitpix : bitpix;
            if (prod < 0 || pcount < 0 || gcount < 0 || b % 8 || b > 64 ||
                prod + pcount > (1LL << 52) / (b / 8 ? b / 8 : 1) / (gcount ? gcount : 1)) {
                rc = lt_error_set(err, LT_EINPUT, name, 0,
                                  "not a valid FITS file: HDU %d's header gives an impossible "
                                  "data size (BITPIX %lld, NAXIS %lld, PCOUNT %lld, GCOUNT %lld)",
                                  hdu, bitpix, naxis, pcount, gcount);
                goto done;
            }
            bytes = b / 8 * gcount * (pcount + prod);
        }
        long long skip = (bytes + BLOCK - 1) / BLOCK * BLOCK;
        if (skip && fseeko(f, (off_t)skip, SEEK_CUR) != 0)
            goto done; /* beyond the end: CFITSIO reports a short data part */
    }
done:
    fclose(f);
    return rc;
}

int lt_fits_check(const char *path, lt_error *err)
{
    char *name = strndup(path, strcspn(path, "["));
    if (!name)
        return lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    int rc = check_file(name, err);
    free(name);
    return rc;
}

/* A FITS open that fails after CFITSIO opened the file (not an image, no
 * table HDU) leaves the handle allocated (found by fuzzing: 16 bytes per
 * refused file); close it, keeping the first error. */
void lt_fits_close_failed(fitsfile *f)
{
    int status = 0;
    if (f)
        fits_close_file(f, &status);
    fits_clear_errmsg();
}
