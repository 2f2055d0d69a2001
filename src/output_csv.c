/* output_csv: CSV files of one run (see include/steamloft/output_csv.h).
 *
 * Only boundary unit conversions happen here, through units.h: altitudes m ->
 * km, masses kg -> Tg (1 Tg = 1e9 kg), time s -> days and Julian years
 * (365.25 d), mole fraction -> ppmv (1e-6 mol mol-1; allowed in CSV, which
 * carries no CF standard names), column kg m-2 -> precipitable micrometres
 * (1 um of liquid water = 1e-3 kg m-2, water density 1000 kg m-3 by
 * convention). */
#include "steamloft/output_csv.h"

#include "steamloft/cli.h"
#include "steamloft/outfile.h"
#include "steamloft/output_text.h"
#include "steamloft/units.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* A comment line with any '=' replaced by ':' (the profile reader treats
 * "# key = value" as metadata). */
static void comment(FILE *fp, const char *text)
{
    fputs("# ", fp);
    for (const char *c = text; *c; c++)
        fputc(*c == '=' ? ':' : (*c == '\n' ? ' ' : *c), fp);
    fputc('\n', fp);
}

static void preamble(FILE *fp, const sl_output_view *v, const char *what)
{
    char buf[512];
    snprintf(buf, sizeof buf, "%s: %s", what, v->title && v->title[0] ? v->title : "steamloft run");
    comment(fp, buf);
    snprintf(buf, sizeof buf, "written by %s", sl_cli_version());
    comment(fp, buf);
    comment(fp, sl_cli_caution());
    if (v->regime_note && v->regime_note[0]) {
        snprintf(buf, sizeof buf, "validity: %s", v->regime_note);
        comment(fp, buf);
    }
}

static void lat_label(double deg, char *buf, size_t len)
{
    if (deg == 0)
        snprintf(buf, len, "0");
    else
        snprintf(buf, len, "%g%c", fabs(deg), deg < 0 ? 'S' : 'N');
}

static void write_profile(FILE *fp, const sl_output_view *v)
{
    const sl_injection *inj = v->inj;
    double tv = 0, ti = 0;
    for (size_t i = 0; i < inj->n_bands; i++) {
        tv += inj->vapor_kg[i];
        ti += inj->ice_kg[i];
    }
    preamble(fp, v, "steamloft injection profile (lofted water per altitude band)");
    char buf[256];
    snprintf(buf, sizeof buf, "total vapour %.10g Tg, total ice %.10g Tg, %zu bands",
             sl_kg_to_tg(tv), sl_kg_to_tg(ti), inj->n_bands);
    comment(fp, buf);
    comment(fp, "columns: band bottom and top (km above mean sea level), water vapour and "
                "condensed water (ice and liquid) in the band (Tg; totals per band, not rates)");
    if (isfinite(inj->tropopause_altitude_m)) {
        /* The one stratospheric number (include/steamloft/plume.h), as a comment. */
        snprintf(buf, sizeof buf, "stratospheric_water_Tg: %.10g (vapour and ice above the tropopause)",
                 sl_kg_to_tg(sl_injection_mass_above_kg(inj, inj->tropopause_altitude_m)));
        comment(fp, buf);
        fprintf(fp, "# tropopause_altitude_km = %.10g\n", sl_m_to_km(inj->tropopause_altitude_m));
    }
    fprintf(fp, "# latitude_deg = %.10g\n", inj->latitude_deg);
    fprintf(fp, "# time_s = %.10g\n", inj->time_s);
    if (inj->cloud_area_m2 > 0)
        fprintf(fp, "# cloud_area_m2 = %.10g\n", inj->cloud_area_m2);
    fputs("bottom_km,top_km,vapor_Tg,ice_Tg\n", fp);
    for (size_t i = 0; i < inj->n_bands; i++)
        fprintf(fp, "%.10g,%.10g,%.10g,%.10g\n", sl_m_to_km(inj->band_bottom_m[i]),
                sl_m_to_km(inj->band_top_m[i]), sl_kg_to_tg(inj->vapor_kg[i]),
                sl_kg_to_tg(inj->ice_kg[i]));
}

static void write_background(FILE *fp, const sl_output_view *v)
{
    const sl_atmosphere *a = v->atm;
    preamble(fp, v, "steamloft background atmosphere used");
    char buf[512];
    snprintf(buf, sizeof buf, "profile %s (%s); tropopause %.10g km", a->name,
             a->source[0] ? a->source : "no source given", sl_m_to_km(a->tropopause_altitude_m));
    comment(fp, buf);
    if (isfinite(a->join_altitude_m)) { /* a low user column joined onto a climate zone (atmosphere.c) */
        snprintf(buf, sizeof buf, "join_altitude_km %.10g: the profile file ends there; above it %s",
                 sl_m_to_km(a->join_altitude_m), a->joined_onto);
        comment(fp, buf);
    }
    fputs("altitude_km,temperature_K,pressure_Pa,density_kg_m3,h2o_ppmv,n2_per_s2\n", fp);
    for (size_t i = 0; i < a->n; i++)
        fprintf(fp, "%.10g,%.10g,%.10g,%.10g,%.10g,%.10g\n", sl_m_to_km(a->altitude_m[i]),
                a->temperature_K[i], a->pressure_Pa[i], a->density_kg_m3[i],
                sl_mole_fraction_to_ppmv(a->h2o_mole_fraction[i]), a->n2_per_s2[i]);
}

static void write_series(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    preamble(fp, v, "steamloft stratospheric box model: global time series");
    comment(fp, "time after the event in days and Julian years (365.25 d); excess water remaining "
                "in the stratosphere (Tg); removed_*: cumulative mass removed by each path (Tg)");
    fputs("time_days,time_years,global_excess_Tg", fp);
    if (s->percent_of_background)
        fputs(",percent_of_background", fp);
    if (s->column_anomaly_kg_m2)
        fputs(",column_anomaly_kg_m2,column_anomaly_precip_um", fp);
    if (s->local_column_anomaly_kg_m2)
        fputs(",local_column_anomaly_kg_m2", fp);
    if (s->forcing_W_m2)
        fputs(",forcing_W_m2", fp);
    for (size_t k = 0; k < s->n_sink; k++)
        fprintf(fp, ",removed_%s_Tg", s->sink_name[k]);
    fputc('\n', fp);
    for (size_t t = 0; t < s->n_time; t++) {
        fprintf(fp, "%.10g,%.10g,%.10g", sl_s_to_days(s->time_s[t]), sl_s_to_years(s->time_s[t]),
                sl_kg_to_tg(s->global_excess_kg[t]));
        if (s->percent_of_background)
            fprintf(fp, ",%.10g", s->percent_of_background[t]);
        if (s->column_anomaly_kg_m2)
            fprintf(fp, ",%.10g,%.10g", s->column_anomaly_kg_m2[t],
                    sl_kg_m2_to_precip_um(s->column_anomaly_kg_m2[t]));
        if (s->local_column_anomaly_kg_m2)
            fprintf(fp, ",%.10g", s->local_column_anomaly_kg_m2[t]);
        if (s->forcing_W_m2)
            fprintf(fp, ",%.10g", s->forcing_W_m2[t]);
        for (size_t k = 0; k < s->n_sink; k++)
            fprintf(fp, ",%.10g", sl_kg_to_tg(s->sink_kg[k * s->n_time + t]));
        fputc('\n', fp);
    }
}

static void write_series_layers(FILE *fp, const sl_output_view *v)
{
    const sl_output_series *s = v->series;
    preamble(fp, v, "steamloft stratospheric box model: excess water by time, layer and region");
    comment(fp, "one row per time and layer; mole_fraction_anomaly_ppmv is the global-mean "
                "excess; excess_Tg_<south>_<north> is the excess mass in that latitude region "
                "(empty where the region has no box in the layer)");
    fputs("time_days,layer_bottom_km,layer_top_km", fp);
    if (s->mole_fraction_anomaly)
        fputs(",mole_fraction_anomaly_ppmv", fp);
    for (size_t r = 0; r < s->n_region; r++) {
        char a[32], b[32];
        lat_label(s->region_south_deg[r], a, sizeof a);
        lat_label(s->region_north_deg[r], b, sizeof b);
        fprintf(fp, ",excess_Tg_%s_%s", a, b);
    }
    fputc('\n', fp);
    for (size_t t = 0; t < s->n_time; t++)
        for (size_t l = 0; l < s->n_layer; l++) {
            fprintf(fp, "%.10g,%.10g,%.10g", sl_s_to_days(s->time_s[t]),
                    sl_m_to_km(s->layer_bottom_m[l]), sl_m_to_km(s->layer_top_m[l]));
            if (s->mole_fraction_anomaly)
                fprintf(fp, ",%.10g",
                        sl_mole_fraction_to_ppmv(s->mole_fraction_anomaly[t * s->n_layer + l]));
            for (size_t r = 0; r < s->n_region; r++) {
                /* A region without a box in this layer: an empty field (undefined, not 0). */
                double x = s->excess_kg[(t * s->n_region + r) * s->n_layer + l];
                if (isnan(x))
                    fputc(',', fp);
                else
                    fprintf(fp, ",%.10g", sl_kg_to_tg(x));
            }
            fputc('\n', fp);
        }
}

/* One row per source of the plume stage, in the order of the JSON "sources"
 * and "thermals": its kind and regime by the names every output uses, and the
 * share of its water that flies ballistically. */
static void write_sources(FILE *fp, const sl_output_view *v)
{
    const sl_plume *pl = v->plume;
    preamble(fp, v, "steamloft sources of the plume stage and their regimes");
    char buf[256];
    snprintf(buf, sizeof buf, "event regime: %s (the highest of its sources)", sl_plume_regime_name(pl->regime));
    comment(fp, buf);
    comment(fp, "columns: source number (the order of the JSON sources and thermals), kind (sea_plume, "
                "airburst, explosion), regime of its rise (thermal, blow-out, ballistic), ballistic share "
                "of its water (0 thermal, 1 ballistic)");
    fputs("source,kind,regime,ballistic_fraction\n", fp);
    for (size_t i = 0; i < pl->n_thermals; i++)
        fprintf(fp, "%zu,%s,%s,%.10g\n", i + 1, sl_output_source_kind_name(pl->th[i].kind),
                sl_plume_regime_name(pl->th[i].regime), pl->th[i].ballistic_fraction);
}

int sl_output_csv_write(const sl_output_view *v, const char *dir, int force, sl_err *e)
{
    SL_TRY_RETURN(e, sl_output_view_check(v, e));
    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing CSV into '%s': out of memory", dir);
    int rc = sl_outset_begin(set, dir, force, 1, e);
    if (rc == SL_OK)
        rc = sl_output_write_file(set, "profile.csv", write_profile, v, e);
    if (rc == SL_OK && v->plume && v->plume->n_thermals > 0)
        rc = sl_output_write_file(set, "sources.csv", write_sources, v, e);
    if (rc == SL_OK && v->atm)
        rc = sl_output_write_file(set, "background.csv", write_background, v, e);
    if (rc == SL_OK && v->series)
        rc = sl_output_write_file(set, "series.csv", write_series, v, e);
    if (rc == SL_OK && v->series)
        rc = sl_output_write_file(set, "series_layers.csv", write_series_layers, v, e);
    if (rc == SL_OK)
        rc = sl_outset_commit(set, e);
    if (rc != SL_OK) {
        sl_outset_abort(set);
        sl_err_push(e, rc, __func__, __LINE__);
    }
    free(set);
    return rc;
}

/* ------------------------------------------------------------ number text */

/* The fast path below needs a long double with at least a 64-bit
 * significand (x86's extended format, or quadruple precision): its powers of
 * ten up to 1e27 are exact (5^27 < 2^64), and a product or quotient of exact
 * operands is within 2^-64 of itself.  Elsewhere every number takes the
 * snprintf/strtod path. */
#if LDBL_MANT_DIG >= 64
#define SL_CSV_FAST 1
static const long double pow10_ld[28] = {
    1e0L,  1e1L,  1e2L,  1e3L,  1e4L,  1e5L,  1e6L,  1e7L,  1e8L,  1e9L,  1e10L, 1e11L, 1e12L, 1e13L,
    1e14L, 1e15L, 1e16L, 1e17L, 1e18L, 1e19L, 1e20L, 1e21L, 1e22L, 1e23L, 1e24L, 1e25L, 1e26L, 1e27L};

/* Y = AX 10^(16 - XE) in [1e16, 1e17), AX's 17 significant digits before
 * the point, for 1e-11 <= AX < 1e16 (where the power needed is exact): Y is
 * within 2^-8 of the exact product (below 2^57).  0 outside that range or
 * when the long double is not what it says (then neither fast_round nor
 * fast_reads_back may be used). */
static int fast_scaled(double ax, long double *y, int *xe_out)
{
    /* The significand at run time, not only as the header says: under an
     * emulator (valgrind computes x87 long doubles in double precision) the
     * sum below rounds back to one, and every number takes the slow path. */
    volatile long double one = 1.0L, tiny = 0x1p-63L;
    if (!(ax >= 1e-11 && ax < 1e16) || one + tiny == one)
        return 0;
    /* floor(log10 AX), or one less, from the binary exponent (AX is normal
     * here): the loop below settles it in at most two tries, to the one XE
     * with Y in [1e16, 1e17), as it did from floor(log10(AX)). */
    uint64_t bits;
    memcpy(&bits, &ax, sizeof bits);
    int xe = (int)floor((double)((int)((bits >> 52) & 0x7ffu) - 1023) * 0.30102999566398120);
    if (16 - xe > 27)
        xe = 16 - 27;
    for (int tries = 0; tries < 3; tries++) {
        int pw = 16 - xe;
        if (pw < 0 || pw > 27)
            return 0;
        *y = (long double)ax * pow10_ld[pw];
        if (*y < 1e16L)
            xe--;
        else if (*y >= 1e17L)
            xe++;
        else {
            *xe_out = xe;
            return 1;
        }
    }
    return 0;
}

/* floor(Z) for 0 <= Z < 2^62 as an integer, and Z minus it in *FRAC.  On
 * x87 the sum Z + 2^63 is Z rounded to an integer (its unit there is 1) and
 * its significand holds that integer below the leading bit, so no floorl and
 * no conversion to an integer is needed: both change the x87 control word
 * (fldcw).  In one build of the bench ensemble perf put 6 % of the run in
 * this file's numbers, most of it on floorl's frndint and fldcw, where the
 * build before had 2 %; without them it is 2 % in both.  The rounding mode
 * does not matter: the integer is within 1 of Z and the difference, exact,
 * says which way to correct. */
static unsigned long long floor_ld(long double z, long double *frac)
{
#if LDBL_MANT_DIG == 64 && (defined(__x86_64__) || defined(__i386__))
    const long double t = z + 0x1p63L;
    uint64_t sig; /* the low 8 bytes of the 10: the significand */
    memcpy(&sig, &t, sizeof sig);
    unsigned long long n = sig - 0x8000000000000000ull;
    long double fr = z - (long double)(long long)n;
    if (fr < 0.0L) {
        n--;
        fr += 1.0L;
    }
    *frac = fr;
    return n;
#else
    long double fl = floorl(z);
    *frac = z - fl;
    return (unsigned long long)fl;
#endif
}

/* AX's PREC (15-17) significant digits correctly rounded, as "%.*e" gives
 * them, as the integer *N_OUT with the decimal exponent *XP, from Y of
 * fast_scaled.  In units of the last digit, Z = Y / 10^(17 - PREC) is within
 * 2^-8 of the exact value for PREC 17 (Y itself, below 2^57, rounded once to
 * a 64-bit significand: half its unit of 2^-7), 9e-4 for 16 (that error over
 * ten, plus half the division's unit, 2^-11 below 2^54) and 7e-5 for 15
 * (plus 2^-15 below 2^50), so rounding it is exact unless its fraction lies
 * within a window of more than twice that of one half (a possible tie: 0,
 * and the caller asks snprintf).  With one window of 0.02 for all three,
 * about 4 % of the numbers went to snprintf at each precision. */
static int fast_round(long double y, int xe, int prec, unsigned long long *n_out, int *xp)
{
    static const long double tie_window[3] = {2.5e-4L, 2.0e-3L, 1.0e-2L}; /* PREC 15, 16, 17 */
    long double z = y / pow10_ld[17 - prec], fr;
    unsigned long long fl = floor_ld(z, &fr);
    if (fabsl(fr - 0.5L) < tie_window[prec - 15])
        return 0;
    unsigned long long n = fl + (fr > 0.5L ? 1u : 0u);
    *xp = xe;
    if ((long double)n >= pow10_ld[prec]) { /* 99..9.6 rounds up to 10^PREC */
        n /= 10u;
        ++*xp;
    }
    *n_out = n; /* its digits only when they are laid out (digits_of) */
    return 1;
}

/* Whether the decimal N x 10^(XP - prec + 1) (N of PREC digits) reads back as AX > 0
 * (round to nearest, ties to even, as strtod): 1 or 0 when its value, known
 * to 2^-64 of itself, is clearly inside or outside the interval of reals that
 * round to AX; -1 when it is too close to the interval's edge to tell. */
static int fast_reads_back(unsigned long long n, int prec, int xp, double ax)
{
    int e10 = xp - prec + 1;
    if (e10 < -27 || e10 > 27)
        return -1;
    long double v = e10 >= 0 ? (long double)n * pow10_ld[e10] : (long double)n / pow10_ld[-e10];
    /* The edges: halfway to the neighbouring doubles (exact in long double),
     * which for AX positive, finite and below DBL_MAX are nextafter's: the
     * bit pattern one down and one up. */
    uint64_t b, bd, bu;
    memcpy(&b, &ax, sizeof b);
    bd = b - 1u;
    bu = b + 1u;
    double down, up;
    memcpy(&down, &bd, sizeof down);
    memcpy(&up, &bu, sizeof up);
    long double lo = 0.5L * ((long double)ax + (long double)down);
    long double hi = 0.5L * ((long double)ax + (long double)up);
    long double m = (long double)ax * 0x1p-62L;
    if (v > lo + m && v < hi - m)
        return 1;
    if (v < lo - m || v > hi + m)
        return 0;
    return -1;
}
#endif

/* The PREC decimal digits of N into D (N < 10^PREC). */
static void digits_of(unsigned long long n, int prec, char *d)
{
    for (int k = prec - 1; k >= 0; k--) {
        d[k] = (char)('0' + (int)(n % 10u));
        n /= 10u;
    }
}

/* The %g layout of PREC digits D with decimal exponent XP into BUF. */
static void layout_g(char *buf, int neg, const char *d, int prec, int xp)
{
    int np = prec;
    while (np > 1 && d[np - 1] == '0')
        np--;
    char *o = buf;
    if (neg)
        *o++ = '-';
    if (xp < -4 || xp >= prec) {
        *o++ = d[0];
        if (np > 1) {
            *o++ = '.';
            memcpy(o, d + 1, (size_t)(np - 1));
            o += np - 1;
        }
        *o++ = 'e';
        int ax = xp < 0 ? -xp : xp;
        *o++ = xp < 0 ? '-' : '+';
        if (ax >= 100)
            *o++ = (char)('0' + ax / 100);
        *o++ = (char)('0' + ax / 10 % 10);
        *o++ = (char)('0' + ax % 10);
    } else if (xp < 0) {
        *o++ = '0';
        *o++ = '.';
        for (int k = 0; k < -xp - 1; k++)
            *o++ = '0';
        memcpy(o, d, (size_t)np);
        o += np;
    } else {
        int ni = xp + 1; /* digits before the point */
        memcpy(o, d, (size_t)ni);
        o += ni;
        if (np > ni) {
            *o++ = '.';
            memcpy(o, d + ni, (size_t)(np - ni));
            o += np - ni;
        }
    }
    *o = 0;
}

void sl_csv_number_text(char *buf, double x)
{
    if (!isfinite(x) || x == 0.0) {
        snprintf(buf, 32, "%.15g", x);
        return;
    }
    int neg = x < 0.0, fast = 0, xe_fast = 0, xe = 0, have17 = 0;
    char dig[18];
#ifdef SL_CSV_FAST
    long double y = 0.0L;
    fast = fast_scaled(fabs(x), &y, &xe_fast);
#endif
    for (int prec = 15; prec <= 17; prec++) {
        char d[18];
        int xp = 0, done = 0;
        unsigned long long nf = 0; /* the fast path's digits as a number */
#ifdef SL_CSV_FAST
        done = fast && fast_round(y, xe_fast, prec, &nf, &xp);
#endif
        if (!done) {
            if (!have17) {
                char e17[40];
                snprintf(e17, sizeof e17, "%.16e", x); /* [-]d.dddddddddddddddde[+-]XX */
                const char *p = e17 + neg;
                dig[0] = p[0];
                memcpy(dig + 1, p + 2, 16);
                dig[17] = 0;
                xe = atoi(p + 19);
                have17 = 1;
            }
            xp = xe;
            if (prec < 17) {
                /* round the 17 digits to PREC; a tie in the dropped digits
                 * (which stood for an exact value on either side) goes to
                 * snprintf */
                int tie = prec == 16 ? dig[16] == '5' : (dig[15] == '5' && dig[16] == '0');
                if (tie) {
                    snprintf(buf, 32, "%.*g", prec, x);
                    if (strtod(buf, NULL) == x)
                        return;
                    continue;
                }
                memcpy(d, dig, (size_t)prec);
                if (dig[prec] >= '5') {
                    int k = prec - 1;
                    while (k >= 0 && d[k] == '9')
                        d[k--] = '0';
                    if (k >= 0)
                        d[k]++;
                    else {
                        d[0] = '1'; /* 99..9 -> 100..0 */
                        xp++;
                    }
                }
            } else {
                memcpy(d, dig, 17);
            }
        }
        if (prec == 17) {
            if (done)
                digits_of(nf, prec, d);
            layout_g(buf, neg, d, prec, xp);
            return;
        }
        /* Whether these digits read back, decided before they are written
         * out (most numbers need 16 or 17 digits: one layout, not three). */
        int back = -1;
#ifdef SL_CSV_FAST
        if (fast) {
            if (!done) /* digits from the snprintf path */
                for (int k = 0; k < prec; k++)
                    nf = 10u * nf + (unsigned long long)(d[k] - '0');
            back = fast_reads_back(nf, prec, xp, fabs(x));
        }
#endif
        if (back == 0)
            continue;
        if (done)
            digits_of(nf, prec, d);
        layout_g(buf, neg, d, prec, xp);
        if (back < 0)
            back = strtod(buf, NULL) == x;
        if (back)
            return;
    }
}
