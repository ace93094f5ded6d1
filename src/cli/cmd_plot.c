/*
 * lantern plot: one figure of the posteriors of runs and tables of draws.
 */
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "lantern/report.h"

#define MAX_SOURCES 64
#define MAX_OPTS 64

/* "NAME=REST": NAME and REST in place (cut at the first '='); -1 without one. */
static int split_eq(char *s, char **rest)
{
    char *eq = strchr(s, '=');
    if (!eq || eq == s)
        return -1;
    *eq = '\0', *rest = eq + 1;
    return 0;
}

/* --size: single, double, W or WxH (inches). */
static int parse_size(const char *text, double *w, double *h)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%s", text);
    char *x = strchr(buf, 'x');
    if (x)
        *x = '\0';
    if (lt_report_figure_width(buf, w))
        return -1;
    if (x && (lt_parse_double(x + 1, h) || !(*h >= 1 && *h <= 20)))
        return -1;
    return 0;
}

int cli_plot(int argc, char **argv)
{
    const char *src[MAX_SOURCES], *labels_in[MAX_OPTS], *ranges_in[MAX_OPTS], *axes_in[MAX_OPTS],
        *truths_in[MAX_OPTS];
    const char *out = NULL, *params = NULL, *model = NULL, *size = NULL;
    size_t nsrc = 0, nlab = 0, nrange = 0, naxis = 0, ntruth = 0;
    int pair = 0, no_best = 0;
    const cli_opt opts[] = {{"--out", .text = &out},
                            {"--params", .text = &params},
                            {"--model", .text = &model},
                            {"--size", .text = &size},
                            {"--pair", .flag = &pair},
                            {"--no-best", .flag = &no_best},
                            {"--label", .list = labels_in, .n = &nlab, .max = MAX_OPTS},
                            {"--range", .list = ranges_in, .n = &nrange, .max = MAX_OPTS},
                            {"--axis-label", .list = axes_in, .n = &naxis, .max = MAX_OPTS},
                            {"--truth", .list = truths_in, .n = &ntruth, .max = MAX_OPTS},
                            {"", .list = src, .n = &nsrc, .max = MAX_SOURCES},
                            {0}};
    int status = cli_options(argc, argv, 1, "plot", opts, NULL, 0, NULL);
    if (status)
        return status;
    if (!nsrc)
        return cli_usage_error("plot", "give at least one run folder, chain file or table");
    if (!out)
        return cli_usage_error("plot", "--out FILE.pdf or FILE.png is required");
    lt_plot_opts o = {0};
    o.pair = pair, o.no_best = no_best;
    if (size && parse_size(size, &o.width_in, &o.height_in))
        return cli_usage_error("--size", "'%s' is not %s, or WxH in inches", size,
                               LT_FIGURE_WIDTH_TEXT);
    /* the option texts, cut in place in copies */
    char *copies[4 * MAX_OPTS + 1];
    size_t ncopies = 0;
    lt_plot_range ranges[MAX_OPTS];
    lt_plot_text axes[MAX_OPTS];
    lt_plot_value truths[MAX_OPTS];
    const char *names[LT_MAX_FREE];
    lt_run_model models[LT_PLOT_MAX_SERIES];
    size_t nm = 0;
    for (size_t i = 0; i < nrange; i++) {
        char *s = copies[ncopies++] = strdup(ranges_in[i]), *v = NULL;
        char *colon = s && !split_eq(s, &v) ? strchr(v, ':') : NULL;
        if (colon)
            *colon = '\0'; /* LO and HI apart */
        if (!colon || lt_parse_double(v, &ranges[i].lo) ||
            lt_parse_double(colon + 1, &ranges[i].hi)) {
            status = cli_usage_error("--range", "'%s' is not NAME=LO:HI", ranges_in[i]);
            goto done;
        }
        ranges[i].name = s;
        for (size_t k = 0; k < i; k++)
            if (!strcmp(ranges[k].name, s)) {
                status = cli_usage_error("--range", "%s is given twice", s);
                goto done;
            }
    }
    for (size_t i = 0; i < naxis; i++) {
        char *s = copies[ncopies++] = strdup(axes_in[i]), *v;
        if (!s || split_eq(s, &v)) {
            status = cli_usage_error("--axis-label", "'%s' is not NAME=TEXT", axes_in[i]);
            goto done;
        }
        axes[i] = (lt_plot_text){s, v};
    }
    for (size_t i = 0; i < ntruth; i++) {
        char *s = copies[ncopies++] = strdup(truths_in[i]), *v;
        if (!s || split_eq(s, &v) || lt_parse_double(v, &truths[i].value)) {
            status = cli_usage_error("--truth", "'%s' is not NAME=VALUE", truths_in[i]);
            goto done;
        }
        truths[i].name = s;
    }
    if (params) {
        char *s = copies[ncopies++] = strdup(params), *save = NULL;
        for (char *t = s ? strtok_r(s, ",", &save) : NULL; t; t = strtok_r(NULL, ",", &save)) {
            if (o.nparams == LT_MAX_FREE) {
                status = cli_usage_error("--params", "at most %d parameters", LT_MAX_FREE);
                goto done;
            }
            names[o.nparams] = lt_text_trim(t);
            if (!*names[o.nparams++]) {
                status = cli_usage_error("--params", "'%s' has an empty name", params);
                goto done;
            }
        }
        o.params = names;
    }
    o.ranges = ranges, o.nranges = nrange;
    o.axis = axes, o.naxis = naxis;
    o.truth = truths, o.ntruth = ntruth;
    lt_error err;
    lt_error_clear(&err);
    if (lt_report_plot_sources(src, nsrc, model, models, LT_PLOT_MAX_SERIES, &nm, &err)) {
        status = cli_report(&err);
        goto done;
    }
    if (nlab > nm) {
        status = cli_usage_error("--label", "%zu labels for %zu sets of draws", nlab, nm);
        goto done;
    }
    const char *labels[LT_PLOT_MAX_SERIES] = {0};
    for (size_t i = 0; i < nlab; i++)
        labels[i] = labels_in[i];
    o.labels = labels;
    if (lt_report_plot(out, models, nm, &o, &err))
        status = cli_report(&err);
done:
    for (size_t i = 0; i < nm; i++)
        lt_run_model_free(&models[i]);
    for (size_t i = 0; i < ncopies; i++)
        free(copies[i]);
    return status;
}
