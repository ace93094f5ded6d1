/*
 * Shared by the libFuzzer targets (make fuzz): the readers take file
 * names, so each input is written to a file of this process's own and the
 * reader run on it. Rules for every target: the reader may refuse the
 * input with an error (that is its job), but must not crash, hang, leak or
 * touch memory it does not own; AddressSanitizer and UBSan watch for the
 * last three.
 */
#ifndef LANTERN_FUZZ_H
#define LANTERN_FUZZ_H

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* Write data to /tmp/lantern-fuzz-PID-TAG.EXT and return the name (static
 * storage, one per tag). */
static const char *fuzz_file(const char *tag, const char *ext, const uint8_t *data, size_t size)
{
    static char names[4][128];
    static int used;
    char *name = names[used++ % 4];
    snprintf(name, 128, "/tmp/lantern-fuzz-%ld-%s%s", (long)getpid(), tag, ext);
    FILE *f = fopen(name, "wb");
    if (!f)
        abort();
    if (size && fwrite(data, 1, size, f) != size)
        abort();
    if (fclose(f))
        abort();
    return name;
}

#endif
