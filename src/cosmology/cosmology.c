/*
 * Cosmologies: parameter checks, derived densities, E(z), w(z), q(z), ages,
 * and the quadrature pieces shared with zgrid.c.
 *
 * Units: H0 in km/s/Mpc; distances come out in units of the Hubble distance
 * c/H0 and are scaled to Mpc at the end; times likewise with 1/H0 in Gyr.
 */
#include <math.h>
#include <stddef.h>

#include "internal.h"

/* ---- physical constants (SI) ---- */
/* Stefan-Boltzmann constant, exact since the 2019 SI (CODATA 2018). */
#define SIGMA_SB 5.670374419e-8
/* Newtonian constant of gravitation, CODATA 2018. */
#define G_NEWTON 6.67430e-11
#define C_M_S 299792458.0
/* Parsec = 648000/pi au with au = 149597870700 m (IAU 2015 Resolution B2). */
#define MPC_M 3.0856775814913673e22
/* A Julian year of 365.25 days, the astronomical convention (IAU). */
#define GYR_S (1e9 * 365.25 * 86400.0)
/* Boltzmann's constant in eV/K, exact since the 2019 SI (k_B/e, CODATA 2018). */
#define K_B_EV 8.617333262e-5

/* ---- Gauss-Legendre rules (GSL's gsl_integration_glfixed_point values) ---- */
static const double gl2x[] = {-0.57735026918962573, 0.57735026918962573};
static const double gl2w[] = {1.0, 1.0};
static const double gl3x[] = {-0.7745966692414834, 0.0, 0.7745966692414834};
static const double gl3w[] = {0.55555555555555558, 0.88888888888888884,
                              0.55555555555555558};
static const double gl4x[] = {-0.86113631159405257, -0.33998104358485626,
                              0.33998104358485626, 0.86113631159405257};
static const double gl4w[] = {0.34785484513745385, 0.65214515486254609,
                              0.65214515486254609, 0.34785484513745385};
static const double gl6x[] = {-0.93246951420315205, -0.66120938646626448,
                              -0.2386191860831969,  0.2386191860831969,
                              0.66120938646626448,  0.93246951420315205};
static const double gl6w[] = {0.17132449237917036, 0.36076157304813861,
                              0.46791393457269104, 0.46791393457269104,
                              0.36076157304813861, 0.17132449237917036};
static const double gl8x[] = {-0.96028985649753629, -0.79666647741362673,
                              -0.52553240991632899, -0.18343464249564981,
                              0.18343464249564981,  0.52553240991632899,
                              0.79666647741362673,  0.96028985649753629};
static const double gl8w[] = {0.10122853629037626, 0.22238103445337448,
                              0.31370664587788727, 0.36268378337836199,
                              0.36268378337836199, 0.31370664587788727,
                              0.22238103445337448, 0.10122853629037626};

static const lt_gl_rule gl_rules[] = {
    {2, gl2x, gl2w}, {3, gl3x, gl3w}, {4, gl4x, gl4w}, {6, gl6x, gl6w}, {8, gl8x, gl8w},
};

const lt_gl_rule *lt_gl_rule_get(int n)
{
    for (size_t i = 0; i < sizeof gl_rules / sizeof gl_rules[0]; i++)
        if (gl_rules[i].n == n)
            return &gl_rules[i];
    return NULL;
}

/* ---- set-up ---- */
int lt_cosmo_init(lt_cosmo *c, const lt_cosmo_model *m, const lt_cosmo_params *p,
                  lt_error *err)
{
    if (!m)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "no cosmological model given");
    lt_cosmo_params q = *p;
    if (!lt_cosmo_model_uses(m, LT_P_OMEGA_DE))
        q.omega_de = 0.0; /* derived below */
    if (!lt_cosmo_model_uses(m, LT_P_W0))
        q.w0 = -1.0;
    if (!lt_cosmo_model_uses(m, LT_P_WA))
        q.wa = 0.0;
    for (int id = 0; id < LT_P_COUNT; id++) {
        double v = *lt_cosmo_params_slot(&q, id);
        if (!isfinite(v))
            return lt_error_set(err, LT_EINPUT, NULL, 0, "parameter %s is not finite",
                                lt_cosmo_param_name(id));
    }
    if (q.h0 <= 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "h0 must be positive (km/s/Mpc), got %g", q.h0);
    if (q.t_cmb < 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "t_cmb must be >= 0 K (0 switches radiation off), got %g",
                            q.t_cmb);
    if (q.n_eff < 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "n_eff must be >= 0, got %g",
                            q.n_eff);
    if (q.m_nu < 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "m_nu must be >= 0 eV, got %g", q.m_nu);
    if (q.omega_b_h2 < 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0, "omega_b_h2 must be >= 0, got %g",
                            q.omega_b_h2);

    c->model = m;
    c->dh_mpc = LT_C_KM_S / q.h0;
    c->th_gyr = MPC_M / 1e3 / q.h0 / GYR_S;

    /* Photons: rho_gamma = (4 sigma / c^3) T^4 against the critical density
     * 3 H0^2 / (8 pi G). Massless neutrinos: 7/8 (4/11)^(4/3) per species
     * (the standard thermal history, e.g. Weinberg 2008, Cosmology, sec. 3.1). */
    double h0_si = q.h0 * 1e3 / MPC_M;
    double t4 = q.t_cmb * q.t_cmb * q.t_cmb * q.t_cmb;
    c->omega_gamma = 32.0 * M_PI * G_NEWTON * SIGMA_SB * t4 /
                     (3.0 * C_M_S * C_M_S * C_M_S * h0_si * h0_si);
    double per_species = c->omega_gamma * 0.875 * pow(4.0 / 11.0, 4.0 / 3.0) * q.n_eff / 3.0;
    int massive = q.t_cmb > 0.0 && q.m_nu > 0.0;
    c->omega_nu = per_species * (massive ? 2.0 : 3.0);
    c->omega_r = c->omega_gamma + c->omega_nu;
    c->nu_coef = massive ? per_species : 0.0;
    c->nu_y = massive ? q.m_nu / (K_B_EV * cbrt(4.0 / 11.0) * q.t_cmb) : 0.0;
    c->omega_nu_mass = massive ? c->nu_coef * lt_nu_f(c->nu_y) : 0.0;
    c->omega_cb = q.omega_m - c->omega_nu_mass;
    if (m->flat) {
        q.omega_de = 1.0 - q.omega_m - c->omega_r;
        c->omega_k = 0.0;
    } else {
        c->omega_k = 1.0 - q.omega_m - q.omega_de - c->omega_r;
    }
    c->p = q;
    return LT_OK;
}

/* ---- single redshifts ---- */
double lt_cosmo_e2(const lt_cosmo *c, double z)
{
    return lt_cosmo_e2_xy(c, log1p(z), 1.0 + z);
}

double lt_cosmo_efunc(const lt_cosmo *c, double z)
{
    double e2 = lt_cosmo_e2(c, z);
    return e2 >= 0.0 ? sqrt(e2) : NAN;
}

double lt_cosmo_hubble(const lt_cosmo *c, double z)
{
    return c->p.h0 * lt_cosmo_efunc(c, z);
}

double lt_cosmo_w(const lt_cosmo *c, double z)
{
    return c->model->de->w(c, 1.0 / (1.0 + z));
}

double lt_cosmo_q(const lt_cosmo *c, double z)
{
    /* q = (1/2) d ln E^2 / d ln(1+z) - 1; each density term rho ~ (1+z)^(3(1+w))
     * contributes (1 + 3w)/2 of its share: radiation 1, matter 1/2,
     * curvature 0, dark energy (1 + 3 w(z))/2. */
    double y = 1.0 + z, x = log1p(z);
    double e2 = lt_cosmo_e2_xy(c, x, y);
    double y3 = y * y * y;
    double num = c->omega_r * y3 * y + 0.5 * c->omega_cb * y3;
    if (c->nu_coef != 0.0) {
        /* the massive neutrino, rho = nu_coef y^4 f(u) with u = nu_y/y,
         * contributes rho (1 - (1/2) d ln f / d ln u): 1 while
         * relativistic, 1/2 once it is matter */
        double k = pow(0.3173 * c->nu_y / y, 1.83);
        num += c->nu_coef * y3 * y * lt_nu_f(c->nu_y / y) * (1.0 - 0.5 * k / (1.0 + k));
    }
    if (c->p.omega_de != 0.0)
        num += 0.5 * (1.0 + 3.0 * lt_cosmo_w(c, z)) * c->p.omega_de *
               c->model->de->density(c, x, 1.0 / y);
    return num / e2;
}

/* ---- the positivity watch ---- */
double lt_watch_e2_of_x(const lt_cosmo *c, double x)
{
    return lt_cosmo_e2_xy(c, x, exp(x));
}

void lt_watch_start(lt_watch *w, lt_watch_fn f)
{
    w->f = f;
    w->count = 0;
    w->t0 = w->v0 = w->t1 = w->v1 = 0.0;
    w->bad_t = NAN;
}

/* Golden-section search for the minimum of f on [a, b]; stops early once
 * f <= 0 is seen, since that is all the caller needs to know. */
static void golden_min(lt_watch_fn f, const lt_cosmo *c, double a, double b,
                       double *tmin, double *vmin)
{
    const double r = 0.6180339887498949; /* (sqrt(5) - 1) / 2 */
    double lo = fmin(a, b), hi = fmax(a, b);
    double t1 = hi - r * (hi - lo), t2 = lo + r * (hi - lo);
    double f1 = f(c, t1), f2 = f(c, t2);
    for (int it = 0; it < 80 && hi - lo > 1e-13 * (1.0 + fabs(hi)); it++) {
        if (!(f1 > 0.0) || !(f2 > 0.0))
            break;
        if (f1 < f2) {
            hi = t2, t2 = t1, f2 = f1;
            t1 = hi - r * (hi - lo), f1 = f(c, t1);
        } else {
            lo = t1, t1 = t2, f1 = f2;
            t2 = lo + r * (hi - lo), f2 = f(c, t2);
        }
    }
    /* Report a non-positive (or NaN) value if one was met, else the lower. */
    if (!(f1 > 0.0) || (f2 > 0.0 && f1 <= f2))
        *tmin = t1, *vmin = f1;
    else
        *tmin = t2, *vmin = f2;
}

int lt_watch_push(lt_watch *w, const lt_cosmo *c, double t, double v)
{
    if (!(v > 0.0)) { /* also catches NaN */
        w->bad_t = t;
        return -1;
    }
    if (w->count >= 2 && w->v1 < w->v0 && w->v1 <= v) {
        double tm, vm;
        golden_min(w->f, c, w->t0, t, &tm, &vm);
        if (!(vm > 0.0)) {
            w->bad_t = tm;
            return -1;
        }
    }
    w->t0 = w->t1, w->v0 = w->v1;
    w->t1 = t, w->v1 = v;
    w->count++;
    return 0;
}

/* ---- ages ---- */

double lt_cosmo_a4e2(const lt_cosmo *c, double a)
{
    double p = c->omega_r + a * (c->omega_cb + a * c->omega_k);
    if (c->nu_coef != 0.0)
        p += c->nu_coef * lt_nu_f(c->nu_y * a);
    if (c->p.omega_de != 0.0) {
        double x = -log(a);
        p += c->p.omega_de * c->model->de->density(c, x, a) * (a * a) * (a * a);
    }
    return p;
}

/* a^4 E^2 as a function of s, with a = s^2 = 1/(1+z): finite as a -> 0. */
static double age_p(const lt_cosmo *c, double s)
{
    return lt_cosmo_a4e2(c, s * s);
}

int lt_cosmo_age_tail(const lt_cosmo *c, double x0, double *out, double *bad_z)
{
    /* De Sitter and its phantom kin: no matter, radiation or curvature, so
     * a^4 E^2 falls as a^(1 - 3w) with w <= -1 and the age integral
     * diverges at a = 0. */
    if (c->omega_r == 0.0 && c->p.omega_m == 0.0 && c->omega_k == 0.0 &&
        c->p.omega_de > 0.0 && c->model->de->w_early(c) <= -1.0) {
        /* E^2 = omega_de f(z) > 0 everywhere: a big bang-free but valid state. */
        *out = INFINITY;
        return 0;
    }
    /*
     * With a = s^2 the age integral is
     *     integral_0^s0 2 s^3 / sqrt(P(s)) ds,   P = a^4 E^2,  s0 = exp(-x0/2),
     * whose integrand is smooth at s = 0 for matter (~ s^2) or radiation
     * (~ s^3). Panels halve towards s = 0 (geometric grading), which also
     * resolves the radiation-matter transition and power laws of early dark
     * energy; no panel is wider than 0.1, because the map to s brings the
     * complex singularities of 1/E (where E^2 = 0) to within about 0.4 of
     * the real axis near s = 1. Each panel takes an 8-point Gauss-Legendre
     * rule. Below s_K = s0 2^-48 the last piece follows the local power law
     * P ~ s^q: 2 s_K^4 / (sqrt(P) (4 - q/2)).
     */
    const lt_gl_rule *r = lt_gl_rule_get(8);
    lt_watch w;
    lt_watch_start(&w, age_p);
    double s0 = exp(-0.5 * x0), sum = 0.0, hi = s0, lo;
    const double s_end = ldexp(s0, -48);
    for (; hi > s_end; hi = lo) {
        lo = fmax(0.5 * hi, hi - 0.1);
        double half = 0.5 * (hi - lo), mid = 0.5 * (hi + lo);
        double part = 0.0;
        for (int i = r->n - 1; i >= 0; i--) { /* descending s, for the watch */
            double s = mid + half * r->x[i];
            double p = age_p(c, s);
            if (lt_watch_push(&w, c, s, p)) {
                *bad_z = 1.0 / (w.bad_t * w.bad_t) - 1.0;
                return -1;
            }
            part += r->w[i] * s * s * s / sqrt(p);
        }
        sum += 2.0 * half * part;
    }
    double p1 = age_p(c, hi), p2 = age_p(c, 0.5 * hi);
    if (!(p1 > 0.0) || !(p2 > 0.0)) {
        *bad_z = 1.0 / (0.25 * hi * hi) - 1.0;
        return -1;
    }
    double q = log2(p1 / p2), denom = 4.0 - 0.5 * q;
    if (denom < 1e-3) { /* integrand not decaying: the age is beyond any number */
        *out = INFINITY;
        return 0;
    }
    *out = sum + 2.0 * hi * hi * hi * hi / (sqrt(p1) * denom);
    return 0;
}

int lt_cosmo_err_no_big_bang(lt_error *err, double z)
{
    return lt_error_set(err, LT_EDOMAIN, NULL, 0,
                        "E^2 = H^2/H0^2 is not positive at z = %.4g: this universe "
                        "has no big bang, so ages are undefined",
                        z);
}

int lt_cosmo_age(const lt_cosmo *c, double z, double *age_gyr, lt_error *err)
{
    if (!isfinite(z) || z < 0.0)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "redshift must be finite and >= 0, got %g", z);
    /* E^2 > 0 on [0, z]: sample x at spacing <= 0.02 (no integral needed). */
    double x1 = log1p(z);
    int m = (int)ceil(x1 / 0.02);
    lt_watch w;
    lt_watch_start(&w, lt_watch_e2_of_x);
    for (int i = 0; i <= m; i++) {
        double x = m ? x1 * i / m : 0.0;
        if (lt_watch_push(&w, c, x, lt_watch_e2_of_x(c, x)))
            return lt_cosmo_err_no_big_bang(err, expm1(w.bad_t));
    }
    double tail, bad_z;
    if (lt_cosmo_age_tail(c, x1, &tail, &bad_z))
        return lt_cosmo_err_no_big_bang(err, bad_z);
    *age_gyr = tail * c->th_gyr;
    return LT_OK;
}
