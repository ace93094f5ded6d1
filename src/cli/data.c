/* The DATA options of the command-line contract, shared by every command
 * that reads a survey. */
#include <string.h>

#include "cli.h"

const char *cli_data_help =
    "data:\n"
    "  --data FILE         the Hubble-diagram table: text (whitespace or CSV, header\n"
    "                      on the first non-blank line) or FITS (file.fits[2] picks an HDU)\n"
    "  --columns ROLE=NAME,...\n"
    "                      which column holds what: z (CMB-frame redshift), zhel\n"
    "                      (heliocentric; defaults to z), one of mu (distance modulus),\n"
    "                      mag (standardised magnitude) or dl (Mpc), err, id\n"
    "  --cov FILE          a covariance term (repeatable): text 'N then N*N values' or\n"
    "                      N rows of N, or a FITS image\n"
    "  --modes FILE        systematic modes: a header (id column, one column per mode),\n"
    "                      an 'amplitude' row, then one row per object in table order\n"
    "  --no-err-diag       do not add diag(err^2): the --cov already holds the errors\n"
    "  --zmin X, --zmax X  keep objects with X <= z (z <= X)\n"
    "  --keep-ids FILE     keep only the ids listed (one a line); needs id=NAME\n"
    "  --drop-ids FILE     drop the ids listed\n"
    "The covariance is diag(err^2) + every --cov + the --modes part. A table with more\n"
    "header names than fields per row is read if the names left over are trailing\n"
    "and mapped to no role (a warning says so); any other mismatch is an error.\n";

void cli_print_warnings(const lt_survey *s)
{
    for (size_t i = 0; s && i < s->nwarnings; i++)
        fprintf(stderr, "lantern: warning: %s\n", s->warnings[i]);
}
