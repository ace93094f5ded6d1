/*
 * How people write lantern's names: parameters and models as typeset
 * symbols, in LaTeX for the tables and in PLplot's text for the figures,
 * from one table so that a table and a figure of one run always agree.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lantern/report.h"

/* Name, LaTeX, PLplot text (#d ... #u: subscript; UTF-8 Greek and minus). */
static const struct {
    const char *name, *tex, *plot;
} params[] = {
    {"omega_m", "$\\Omega_\\mathrm{m}$", "Ω#dm#u"},
    {"omega_de", "$\\Omega_\\mathrm{DE}$", "Ω#dDE#u"},
    {"omega_k", "$\\Omega_k$", "Ω#dk#u"},
    {"w0", "$w_0$", "w#d0#u"},
    {"wa", "$w_a$", "w#da#u"},
    {"h0", "$H_0$ [km\\,s$^{-1}$\\,Mpc$^{-1}$]", "H#d0#u [km s#u−1#d Mpc#u−1#d]"},
    {"offset", "$M$ [mag]", "M [mag]"},
    {"q0", "$q_0$", "q#d0#u"},
    {"z_t", "$z_\\mathrm{t}$", "z#dt#u"},
    {"age_gyr", "age [Gyr]", "age [Gyr]"},
    {"w_pivot", "$w_\\mathrm{p}$", "w#dp#u"},
    {"z_pivot", "$z_\\mathrm{p}$", "z#dp#u"},
    {"omega_b_h2", "$\\Omega_\\mathrm{b} h^2$", "Ω#db#uh#u2#d"},
    {"m_nu", "$\\sum m_\\nu$ [eV]", "Σm#dν#u [eV]"},
    {"rd_h", "$r_\\mathrm{d} h$ [Mpc]", "r#dd#uh [Mpc]"},
    {"rd", "$r_\\mathrm{d}$ [Mpc]", "r#dd#u [Mpc]"},
    {"t_cmb", "$T_\\mathrm{CMB}$ [K]", "T#dCMB#u [K]"},
    {"n_eff", "$N_\\mathrm{eff}$", "N#deff#u"},
    {"alpha", "$\\alpha$", "α"},
    {"beta", "$\\beta$", "β"},
    {"gamma", "$\\gamma$", "γ"},
    {"sigma_int", "$\\sigma_\\mathrm{int}$", "σ#dint#u"},
    {"x1_mean", "$\\langle x_1 \\rangle$", "⟨x#d1#u⟩"},
    {"x1_sd", "$\\sigma_{x_1}$", "σ#dx1#u"},
    {"color_mean", "$\\langle c \\rangle$", "⟨c⟩"},
    {"color_sd", "$\\sigma_c$", "σ#dc#u"},
};

static const struct {
    const char *name, *tex, *plot;
} models[] = {
    {"lcdm-flat", "flat $\\Lambda$CDM", "flat ΛCDM"},
    {"lcdm", "$\\Lambda$CDM", "ΛCDM"},
    {"wcdm-flat", "flat $w$CDM", "flat wCDM"},
    {"wcdm", "$w$CDM", "wCDM"},
    {"w0wa-flat", "flat $w_0w_a$", "flat w#d0#uw#da#u"},
    {"w0wa", "$w_0w_a$", "w#d0#uw#da#u"},
};

/* s into buf for form f: LaTeX escapes its specials (\texttt for a name
 * of code); PLplot text takes '#' as an escape, doubled to print it. */
static size_t put_plain(const char *s, lt_label_form f, char *buf, size_t size, size_t k)
{
    for (; *s && k + 24 < size; s++) {
        const char *word = *s == '\\' ? "\\textbackslash{}"
                           : *s == '^'  ? "\\textasciicircum{}"
                           : *s == '~'  ? "\\textasciitilde{}"
                                        : NULL;
        if (f == LT_LABEL_TEX && word) {
            k += (size_t)snprintf(buf + k, size - k, "%s", word);
            continue;
        }
        if (f == LT_LABEL_TEX && strchr("_#%&${}", *s))
            buf[k++] = '\\';
        else if (f == LT_LABEL_PLOT && *s == '#')
            buf[k++] = '#';
        buf[k++] = *s;
    }
    buf[k] = '\0';
    return k;
}

const char *lt_report_param_label(const char *name, lt_label_form f, char *buf, size_t size)
{
    if (!size)
        return buf;
    buf[0] = '\0';
    const char *at = strchr(name, '@');
    size_t base = at ? (size_t)(at - name) : strlen(name);
    for (size_t i = 0; i < sizeof params / sizeof params[0]; i++)
        if (strlen(params[i].name) == base && !strncmp(params[i].name, name, base)) {
            size_t k = (size_t)snprintf(buf, size, "%s",
                                        f == LT_LABEL_TEX ? params[i].tex : params[i].plot);
            if (at && k + 4 < size) { /* the group after the symbol: "σ_int (SNLS)" */
                k += (size_t)snprintf(buf + k, size - k, " (");
                k = put_plain(at + 1, f, buf, size, k);
                snprintf(buf + k, size - k, ")");
            }
            return buf;
        }
    /* a name without a symbol: as written (code type in LaTeX) */
    size_t k = f == LT_LABEL_TEX ? (size_t)snprintf(buf, size, "\\texttt{") : 0;
    k = put_plain(name, f, buf, size, k);
    if (f == LT_LABEL_TEX)
        snprintf(buf + k, size - k, "}");
    return buf;
}

const char *lt_report_model_label(const char *name, lt_label_form f, char *buf, size_t size)
{
    for (size_t i = 0; i < sizeof models / sizeof models[0]; i++)
        if (!strcmp(models[i].name, name)) {
            snprintf(buf, size, "%s", f == LT_LABEL_TEX ? models[i].tex : models[i].plot);
            return buf;
        }
    if (size)
        put_plain(name, f, buf, size, 0);
    return buf;
}

int lt_report_figure_width(const char *text, double *width_in)
{
    if (!strcmp(text, "single"))
        return *width_in = LT_FIGURE_SINGLE_IN, 0;
    if (!strcmp(text, "double"))
        return *width_in = LT_FIGURE_DOUBLE_IN, 0;
    char *end;
    double w = strtod(text, &end);
    if (end == text || *end || !(w >= 2 && w <= 20))
        return -1;
    *width_in = w;
    return 0;
}
