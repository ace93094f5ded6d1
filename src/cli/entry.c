/* bin/lantern's entry: the command line in one process. */
#include "cli.h"

int main(int argc, char **argv) { return cli_main(argc, argv); }
