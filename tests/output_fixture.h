/* Shared fixture of the output tests (test_output_nc, test_output_csv,
 * test_plot): a synthetic run, not physics under test.  Vapour in 1-km bands
 * shaped like a Gaussian around 25 km (100 Tg in all, ice 10 % of it), an
 * isothermal hydrostatic background (T = 250 K), and a box-model series
 * decaying as exp(-t / 3 yr) over three latitude regions, with two removal
 * paths that together hold what has left.  The tests check that these numbers
 * survive the trip through each file format.  Helpers for temporary
 * directories and for running external readers live here too. */
#ifndef SL_OUTPUT_FIXTURE_H
#define SL_OUTPUT_FIXTURE_H

#include "sl_test.h"

#include "steamloft/output.h"
#include "steamloft/units.h"

#include <dirent.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

enum { NB = 60, NLEV = 31, NT = 121, NR = 3, NL = 33, NSINK = 2 };

typedef struct fixture {
    double bottom[NB], top[NB], vap[NB], ice[NB];
    sl_injection inj;
    double z[NLEV], T[NLEV], p[NLEV], rho[NLEV], x[NLEV], n2[NLEV];
    sl_atmosphere atm;
    double t_s[NT], south[NR], north[NR], lbot[NB], ltop[NB]; /* NB >= NL */
    double excess[NT * NR * NB], xan[NT * NB], glob[NT], col[NT], pct[NT], frc[NT];
    double sink[NSINK * NT];
    const char *sink_names[NSINK];
    sl_output_series series;
    sl_output_scalar scalars[2];
    sl_output_param params[3];
    sl_output_view view;
    double total_vapor_kg;
} fixture;

static fixture F;
static char tmpdir[256];

static inline const char *srcdir(void)
{
    const char *s = getenv("SL_SRCDIR");
    return s && s[0] ? s : ".";
}

static inline void build_fixture(int layers_equal_bands)
{
    memset(&F, 0, sizeof F);
    /* Injection: 0-60 km, 1-km bands, vapour ~ Gaussian(25 km, 3 km), 100 Tg in all. */
    double w = 0;
    for (int i = 0; i < NB; i++) {
        F.bottom[i] = 1000.0 * i;
        F.top[i] = 1000.0 * (i + 1);
        double zc = 1000.0 * (i + 0.5);
        F.vap[i] = exp(-0.5 * pow((zc - 25000.0) / 3000.0, 2));
        w += F.vap[i];
    }
    F.total_vapor_kg = 0;
    for (int i = 0; i < NB; i++) {
        F.vap[i] *= 100.0e9 / w;
        F.ice[i] = 0.1 * F.vap[i];
        F.total_vapor_kg += F.vap[i];
    }
    F.inj = (sl_injection){NB, F.bottom, F.top, F.vap, F.ice, 16500.0, -20.5, 3600.0, 2.0e11, NAN, NAN, 0};

    /* Isothermal hydrostatic background, T = 250 K, scale height R T / (M g). */
    double H = SL_GAS_CONSTANT_J_MOL_K * 250.0 / (SL_MOLAR_MASS_DRY_AIR_KG_MOL * SL_USSA_G0_M_S2);
    for (int i = 0; i < NLEV; i++) {
        F.z[i] = 2000.0 * i;
        F.T[i] = 250.0;
        F.p[i] = 101325.0 * exp(-F.z[i] / H);
        F.rho[i] = F.p[i] * SL_MOLAR_MASS_DRY_AIR_KG_MOL / (SL_GAS_CONSTANT_J_MOL_K * F.T[i]);
        F.x[i] = 5.0e-6;
        F.n2[i] = 3.9e-4;
    }
    F.atm = (sl_atmosphere){.name = "isothermal-test", .source = "test fixture", .n = NLEV,
                            .altitude_m = F.z, .temperature_K = F.T, .pressure_Pa = F.p,
                            .density_kg_m3 = F.rho, .h2o_mole_fraction = F.x, .n2_per_s2 = F.n2,
                            .tropopause_altitude_m = 16500.0, .strat_water_burden_kg = 1.4e12,
                            .strat_water_column_kg_m2 = 1.4e12 / SL_EARTH_AREA_M2};

    /* Box model: monthly for 10 years, e-folding 3 years, three regions. */
    const double tau_s = sl_years_to_s(3.0);
    int nl = layers_equal_bands ? NB : NL;
    for (int l = 0; l < nl; l++) {
        F.lbot[l] = layers_equal_bands ? F.bottom[l] : 17000.0 + 1000.0 * l;
        F.ltop[l] = layers_equal_bands ? F.top[l] : 18000.0 + 1000.0 * l;
    }
    double s_[NR] = {-90, -20, 20}, n_[NR] = {-20, 20, 90}, share[NR] = {0.3, 0.5, 0.2};
    memcpy(F.south, s_, sizeof s_);
    memcpy(F.north, n_, sizeof n_);
    F.sink_names[0] = "transport";
    F.sink_names[1] = "photolysis";
    for (int t = 0; t < NT; t++) {
        F.t_s[t] = t * (SL_S_PER_YEAR / 12.0);
        double f = exp(-F.t_s[t] / tau_s);
        F.glob[t] = 0;
        for (int r = 0; r < NR; r++)
            for (int l = 0; l < nl; l++) {
                double m = 100.0e9 / nl * share[r] * f;
                F.excess[(t * NR + r) * nl + l] = m;
                F.glob[t] += m;
            }
        for (int l = 0; l < nl; l++)
            F.xan[t * nl + l] = 1.0e-6 * f;
        F.col[t] = F.glob[t] / SL_EARTH_AREA_M2;
        F.pct[t] = 100.0 * F.glob[t] / 1.4e12;
        F.frc[t] = 0.1 * f;
        F.sink[t] = 0.9 * (100.0e9 - F.glob[t]);
        F.sink[NT + t] = 0.1 * (100.0e9 - F.glob[t]);
    }
    F.series = (sl_output_series){NT, NR, (size_t)nl, F.t_s, F.south, F.north, F.lbot, F.ltop,
                                  F.excess, F.xan, F.glob, F.col, NULL, F.pct, F.frc,
                                  NSINK, F.sink_names, F.sink, NULL, NULL, NULL};
    F.scalars[0] = (sl_output_scalar){"efolding_time", "e-folding time of the global excess",
                                      "s", NULL, tau_s};
    F.scalars[1] = (sl_output_scalar){"burst_altitude", "altitude of the airburst", "m", NULL,
                                      31300.0};
    F.params[0] = (sl_output_param){"impactor.diameter_m", NULL, 300.0, "file"};
    F.params[1] = (sl_output_param){"impactor.type", "stony", 0, "file"};
    F.params[2] = (sl_output_param){"atmosphere.profile", "us1976", 0, "default"};
    static char *argv[] = {"steamloft", "run", "my scenario.ini", "-o", "out.nc", NULL};
    F.view = (sl_output_view){&F.inj, &F.atm, &F.series, F.scalars, 2, F.params, 3,
                              "invented test scenario", "my scenario.ini", NULL, NULL,
                              SL_OUTPUT_USED_ATMOSPHERE | SL_OUTPUT_USED_PLUME |
                                  SL_OUTPUT_USED_STRAT,
                              5, argv, NULL};
}

static inline void mk_tmp(void)
{
    snprintf(tmpdir, sizeof tmpdir, "%s/slnc.XXXXXX", getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp");
    ck_assert_ptr_nonnull(mkdtemp(tmpdir));
    chmod(tmpdir, 0755);
}

static inline void rm_tmp(void)
{
    if (getenv("SL_TEST_KEEP")) { /* debugging: keep the files and say where */
        printf("# kept %s\n", tmpdir);
        return;
    }
    char cmd[600];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
    if (system(cmd) != 0)
        fprintf(stderr, "could not remove %s\n", tmpdir);
}

/* Number of entries in DIR other than . and .. (-1 if it cannot be read). */
static inline int count_entries(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d)
        return -1;
    int n = 0;
    struct dirent *de;
    while ((de = readdir(d)))
        if (strcmp(de->d_name, ".") && strcmp(de->d_name, ".."))
            n++;
    closedir(d);
    return n;
}

/* Run a shell command, return its exit status; its output goes to OUT (may be NULL). */
static inline int run_cmd_echo(const char *cmd, char *out, size_t len, int echo)
{
    FILE *p = popen(cmd, "r");
    ck_assert_ptr_nonnull(p);
    size_t used = 0;
    char buf[4096];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, p)) > 0) {
        if (out && used + n < len) {
            memcpy(out + used, buf, n);
            used += n;
        }
        if (echo)
            fwrite(buf, 1, n, stdout); /* visible in the test log */
    }
    if (out)
        out[used] = '\0';
    int st = pclose(p);
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

/* Run a shell command, echo its output into the test log. */
static inline int run_cmd(const char *cmd, char *out, size_t len)
{
    return run_cmd_echo(cmd, out, len, 1);
}

#endif
