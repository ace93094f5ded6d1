/*
 * The command line's help texts. Each is a file of src/cli/help/, plain text
 * exactly as printed (NAME.txt gives cli_help_NAME, '-' read as '_'),
 * embedded at build time by scripts/embed-text.sh into BUILD/gen/help.c,
 * with its '@include FILE' lines already replaced by that file. Print them
 * with fputs: they are text, not printf formats.
 */
#ifndef LANTERN_CLI_HELP_H
#define LANTERN_CLI_HELP_H

/* lantern --help: the text before the list of commands, and after it. */
extern const char cli_help_main[];
extern const char cli_help_main_tail[];
/* lantern distance --help: before the list of models, and after it. */
extern const char cli_help_distance[];
extern const char cli_help_distance_tail[];
/* lantern COMMAND --help, whole. */
extern const char cli_help_inspect[];
extern const char cli_help_simulate[];
extern const char cli_help_fit[];
extern const char cli_help_sample[];
extern const char cli_help_reweight[];
extern const char cli_help_compare[];
extern const char cli_help_run[];
extern const char cli_help_report[];
extern const char cli_help_bench[];
extern const char cli_help_campaign[];
extern const char cli_help_forecast[];
extern const char cli_help_plot[];
/* The DATA and MODEL options, which the commands' texts include. */
extern const char cli_help_data[];
extern const char cli_help_model[];

#endif
