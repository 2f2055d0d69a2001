/* output_ensemble: per-member CSV and netCDF, the summary and the plots of
 * an ensemble or sweep (see include/steamloft/output_ensemble.h). */
#include "steamloft/output_ensemble.h"
#include "steamloft/output_csv.h"

#include "steamloft/output_nc.h"
#include "steamloft/output_text.h"
#include "steamloft/plot.h"
#include "steamloft/sweep_rows.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

enum { NC_BUF_ROWS = 1024 };

/* The fill value of missing numbers in netCDF (the netCDF default for doubles). */
#define ENS_NC_FILL 9.96920996838686905e+36
#define ENS_NC_FILL_F 9.96920996838686905e+36f

/* Bins of the binned percentiles (sl_ens_hist): lofted water per band from
 * 1 kg to 1e16 kg, remaining fraction from 1e-6 to 1, 100 bins per decade
 * (PRACTICE: 1.2 % at most, well inside the spread being drawn). */
#define PROF_LO_LOG10 0.0
#define PROF_HI_LOG10 16.0
#define REM_LO_LOG10 -6.0
#define REM_HI_LOG10 0.0
#define BINS_PER_DECADE 100.0

typedef struct sl_ens_summary summary;
static void summary_free(summary *u);

static const char *sampling_word(const sl_ens_plan *p)
{
    return p->mode == SL_ENS_GRID ? "grid" : p->mode == SL_ENS_SOBOL ? "sobol" : "monte_carlo";
}

/* Text appended to a row buffer (room is counted by sl_ens_sink_row_cap). */
typedef struct textbuf {
    char *p;
    size_t n, cap;
} textbuf;

static void tb_put(textbuf *t, const char *s, size_t len)
{
    if (t->n + len >= t->cap)
        len = t->n + 1 < t->cap ? t->cap - 1 - t->n : 0;
    memcpy(t->p + t->n, s, len);
    t->n += len;
    t->p[t->n] = '\0';
}

static void tb_char(textbuf *t, char c) { tb_put(t, &c, 1); }

/* S as one CSV field, quoted when it holds a comma, quote or newline. */
static void csv_field(textbuf *t, const char *s)
{
    if (strpbrk(s, ",\"\n\r") == NULL) {
        tb_put(t, s, strlen(s));
        return;
    }
    tb_char(t, '"');
    for (; *s; s++) {
        if (*s == '"')
            tb_char(t, '"');
        tb_char(t, *s == '\n' || *s == '\r' ? ' ' : *s);
    }
    tb_char(t, '"');
}

/* X with the fewest digits (15 to 17) that read back to the same double, so
 * the CSV holds exactly what the statistics used. */
static void csv_number(textbuf *t, double x)
{
    char buf[40];
    sl_csv_number_text(buf, x);
    tb_put(t, buf, strlen(buf));
}

static const char *status_word(int st)
{
    switch (st) {
    case SL_OK: return "ok";
    case SL_EDATA: return "bad_data";
    case SL_ENUMERIC: return "numerical";
    case SL_EUSAGE: return "usage";
    case SL_ENOMEM: return "no_memory";
    default: return "failed";
    }
}

/* netCDF-C call CALL on the sink's file, checked by the output layer. */
#define NCS(s, varid, what, name, call) \
    SL_TRY_RETURN(e, sl_output_nc_check((call), (s)->nc, (varid), (s)->rq->nc_path, (what), (name), e))

static int att(const sl_ens_sink *s, int varid, const char *name, const char *text, sl_err *e)
{
    return sl_output_nc_att_text(s->nc, varid, s->rq->nc_path, name, text, e);
}

static int nc_flush(sl_ens_sink *s, sl_err *e)
{
    if (s->nc < 0 || s->nbuf == 0)
        return SL_OK;
    size_t st[2] = {s->nc_written, 0}, ct[2] = {s->nbuf, SL_ENS_REASON_LEN};
    size_t ni = s->plan->n_inputs, no = s->model->n_outputs, nb = s->chain->n_band;
    NCS(s, s->nc_real, "writing", "", nc_put_vara_int(s->nc, s->nc_real, st, ct, s->buf_m));
    NCS(s, s->nc_status, "writing", "", nc_put_vara_int(s->nc, s->nc_status, st, ct, s->buf_st));
    NCS(s, s->nc_reason, "writing", "", nc_put_vara_text(s->nc, s->nc_reason, st, ct, s->buf_reason));
    /* Rows are buffered member-major; each variable takes one column. */
    for (size_t k = 0; k < ni; k++) {
        double tmp[NC_BUF_ROWS];
        for (size_t r = 0; r < s->nbuf; r++)
            tmp[r] = s->buf_in[r * ni + k];
        NCS(s, s->nc_in[k], "writing", "", nc_put_vara_double(s->nc, s->nc_in[k], st, ct, tmp));
    }
    for (size_t j = 0; j < no; j++) {
        double tmp[NC_BUF_ROWS];
        for (size_t r = 0; r < s->nbuf; r++)
            tmp[r] = s->buf_out[r * no + j];
        NCS(s, s->nc_out[j], "writing", "", nc_put_vara_double(s->nc, s->nc_out[j], st, ct, tmp));
    }
    if (nb > 0) {
        size_t cp[2] = {s->nbuf, nb};
        NCS(s, s->nc_prof, "writing", "", nc_put_vara_float(s->nc, s->nc_prof, st, cp, s->buf_prof));
    }
    s->nc_written += s->nbuf;
    s->nbuf = 0;
    return SL_OK;
}

size_t sl_ens_sink_row_cap(const sl_ens_plan *p, const sl_ens_model *m)
{
    /* member and status (48), the reason quoted with every character
     * doubled, 25 per number (a comma and at most 24 characters of %.17g),
     * the newline. */
    size_t text = 0; /* a text key's value, quoted with every character doubled */
    for (size_t k = 0; k < p->n_inputs; k++)
        for (size_t i = 0; i < p->inputs[k].n_labels; i++)
            if (2 * strlen(p->inputs[k].labels[i]) + 3 > text)
                text = 2 * strlen(p->inputs[k].labels[i]) + 3;
    return 48 + 2 * SL_ENS_REASON_LEN + 2 + 25 * (p->n_inputs + m->n_outputs) + text * p->n_inputs + 2;
}

void sl_ens_sink_format(const void *sinkp, size_t m, const double *in, const double *out, int st,
                        const char *reason, char *text, size_t cap)
{
    const sl_ens_sink *s = sinkp;
    textbuf t = {text, 0, cap};
    text[0] = '\0';
    if (!s->csv)
        return;
    size_t ni = s->plan->n_inputs, no = s->model->n_outputs;
    char head[64];
    int w = snprintf(head, sizeof head, "%zu,%s,", m, status_word(st));
    tb_put(&t, head, w > 0 ? (size_t)w : 0);
    csv_field(&t, reason);
    for (size_t k = 0; k < ni; k++) {
        const char *label = sl_ens_input_label(s->plan, k, in[k]); /* a text key's value */
        tb_char(&t, ',');
        if (label)
            csv_field(&t, label);
        else
            csv_number(&t, in[k]);
    }
    for (size_t j = 0; j < no; j++) {
        tb_char(&t, ',');
        if (st == SL_OK && isfinite(out[j]))
            csv_number(&t, out[j]); /* else: failed member, or an output that does not apply */
    }
    tb_char(&t, '\n');
}

int sl_ens_sink_row(void *sinkp, size_t m, const double *in, const double *out, int st, const char *reason,
                    const char *text, sl_err *e)
{
    sl_ens_sink *s = sinkp;
    size_t ni = s->plan->n_inputs, no = s->model->n_outputs, nb = s->chain->n_band;
    if (s->rows)
        sl_sweep_rows_add(s->rows, m, in, out, out + no + nb + s->chain->n_time, st, reason);
    for (size_t k = 0; k < ni; k++) {
        const sl_param_def *d = &sl_scenario_params[s->ids[k]];
        if (s->plan->inputs[k].labels == NULL && (in[k] < d->min_value || in[k] > d->max_value))
            s->out_of_range[k]++;
    }
    if (st == SL_OK) {
        s->n_ok++;
        sl_ens_hist_add(&s->hprof, out + no);
        sl_ens_hist_add(&s->hrem, out + no + nb);
    }
    if (s->csv && text) {
        size_t len = strlen(text);
        if (fwrite(text, 1, len, s->csv) != len)
            SL_FAIL_RETURN(e, SL_EIO, "%s: write error: %s", s->csv_name, strerror(errno));
    }
    if (s->nc >= 0) {
        size_t r = s->nbuf++;
        s->buf_m[r] = (int)m;
        s->buf_st[r] = st;
        memcpy(s->buf_in + r * ni, in, ni * sizeof *in);
        for (size_t j = 0; j < no; j++)
            s->buf_out[r * no + j] = st == SL_OK && isfinite(out[j]) ? out[j] : ENS_NC_FILL;
        for (size_t b = 0; b < nb; b++) {
            double x = out[no + b];
            s->buf_prof[r * nb + b] = st == SL_OK && isfinite(x) ? (float)x : ENS_NC_FILL_F;
        }
        char *rs = s->buf_reason + r * SL_ENS_REASON_LEN;
        memset(rs, 0, SL_ENS_REASON_LEN);
        memcpy(rs, reason, strnlen(reason, SL_ENS_REASON_LEN - 1));
        if (s->nbuf == NC_BUF_ROWS)
            SL_TRY_RETURN(e, nc_flush(s, e));
    }
    return SL_OK;
}

static void csv_header(FILE *f, const sl_ens_plan *p, const sl_ens_model *m)
{
    fputs("member,status,reason", f);
    for (size_t k = 0; k < p->n_inputs; k++)
        fprintf(f, ",%s", p->inputs[k].key);
    for (size_t j = 0; j < m->n_outputs; j++)
        fprintf(f, ",%s", m->outputs[j].name);
    fputc('\n', f);
}

/* UDUNITS spelling of a scenario key's own unit: "km s-1" for km_s, "kg m-3"
 * for kg_m3, "4.184e15 J" for Mt (UDUNITS' "Mt" is a megatonne of mass). */
static void udunits_of_key(int id, char *buf, size_t n)
{
    const char *suffix = sl_scenario_params[id].unit;
    const sl_unit *u = sl_units_lookup(suffix);
    if (u == NULL || strcmp(u->suffix, "1") == 0 || suffix[0] == '\0') {
        snprintf(buf, n, "1");
        return;
    }
    if (strcmp(u->suffix, "Mt") == 0) {
        snprintf(buf, n, "4.184e15 J");
        return;
    }
    if (strcmp(u->suffix, "deg") == 0) {
        snprintf(buf, n, "degree");
        return;
    }
    /* a_b means a per b; a trailing digit on b is its power (kg_m3 -> kg m-3). */
    const char *us = strchr(suffix, '_');
    if (us == NULL) {
        snprintf(buf, n, "%s", suffix);
        return;
    }
    const char *den = us + 1;
    size_t dl = strlen(den);
    if (dl > 1 && den[dl - 1] >= '2' && den[dl - 1] <= '9')
        snprintf(buf, n, "%.*s %.*s-%c", (int)(us - suffix), suffix, (int)(dl - 1), den, den[dl - 1]);
    else
        snprintf(buf, n, "%.*s %s-1", (int)(us - suffix), suffix, den);
}

/* Chunks of NC_BUF_ROWS members (one flush), and a chunk cache of a few
 * chunks, so the library holds a bounded amount of a variable in memory
 * however many members are written (its default cache grows with the data). */
static int member_chunks(sl_ens_sink *s, int id, int nd, size_t inner, size_t elem_bytes, sl_err *e)
{
    size_t n = s->plan->n_members, rows = n < NC_BUF_ROWS ? n : NC_BUF_ROWS;
    size_t ch[2] = {rows ? rows : 1, inner};
    NCS(s, id, "chunking", "", nc_def_var_chunking(s->nc, id, NC_CHUNKED, ch));
    /* Lossless shuffle (numbers) and deflate: the chunk index is paid anyway, and the
     * failure reasons (mostly empty) and the profiles (mostly zero bands) shrink many-fold. */
    NCS(s, id, "compression", "", nc_def_var_deflate(s->nc, id, elem_bytes > 1, 1, 4));
    size_t bytes = ch[0] * (nd > 1 ? inner : 1) * elem_bytes;
    NCS(s, id, "chunk cache", "", nc_set_var_chunk_cache(s->nc, id, 4 * bytes, 7, 1.0f));
    return SL_OK;
}

static int def_double(sl_ens_sink *s, const char *name, int nd, const int *dims, const char *long_name,
                      const char *units, int fill, int *id, sl_err *e)
{
    NCS(s, NC_GLOBAL, "defining variable", name, nc_def_var(s->nc, name, NC_DOUBLE, nd, dims, id));
    if (fill) {
        double f = ENS_NC_FILL;
        NCS(s, *id, "attribute", "_FillValue", nc_put_att_double(s->nc, *id, "_FillValue", NC_DOUBLE, 1, &f));
    }
    SL_TRY_RETURN(e, att(s, *id, "long_name", long_name, e));
    return att(s, *id, "units", units, e);
}

/* Define the netCDF file (see the header for the layout). */
static int nc_define(sl_ens_sink *s, const char *path, size_t np, const double *pct, sl_err *e)
{
    const sl_ens_plan *p = s->plan;
    const sl_ens_model *m = s->model;
    const sl_ens_chain *c = s->chain;
    size_t n = p->n_members, nb = c->n_band, nt = c->n_time;
    NCS(s, NC_GLOBAL, "creating", "", nc_create(path, NC_CLOBBER | NC_NETCDF4 | NC_CLASSIC_MODEL, &s->nc));
    int dm, dr, dbnd = -1, dnv = -1, dt = -1, dp = -1, id;
    NCS(s, NC_GLOBAL, "defining dimension", "realization", nc_def_dim(s->nc, "realization", n, &dm));
    NCS(s, NC_GLOBAL, "defining dimension", "reason_len", nc_def_dim(s->nc, "reason_len", SL_ENS_REASON_LEN, &dr));
    NCS(s, NC_GLOBAL, "defining variable", "realization", nc_def_var(s->nc, "realization", NC_INT, 1, &dm, &s->nc_real));
    SL_TRY_RETURN(e, member_chunks(s, s->nc_real, 1, 1, sizeof(int), e));
    SL_TRY_RETURN(e, att(s, s->nc_real, "standard_name", "realization", e));
    SL_TRY_RETURN(e, att(s, s->nc_real, "long_name", "ensemble member index", e));
    SL_TRY_RETURN(e, att(s, s->nc_real, "units", "1", e));
    NCS(s, NC_GLOBAL, "defining variable", "status", nc_def_var(s->nc, "status", NC_INT, 1, &dm, &s->nc_status));
    SL_TRY_RETURN(e, member_chunks(s, s->nc_status, 1, 1, sizeof(int), e));
    SL_TRY_RETURN(e, att(s, s->nc_status, "long_name", "member status: 0 ok, otherwise the failure status", e));
    int dims2[2] = {dm, dr};
    NCS(s, NC_GLOBAL, "defining variable", "reason", nc_def_var(s->nc, "reason", NC_CHAR, 2, dims2, &s->nc_reason));
    SL_TRY_RETURN(e, member_chunks(s, s->nc_reason, 2, SL_ENS_REASON_LEN, 1, e));
    SL_TRY_RETURN(e, att(s, s->nc_reason, "long_name", "why the member failed (empty when ok)", e));
    for (size_t k = 0; k < p->n_inputs; k++) {
        char name[SL_ENS_KEY_LEN], desc[160], units[64];
        snprintf(name, sizeof name, "%s", p->inputs[k].key);
        for (char *q = name; *q; q++)
            if (*q == '.')
                *q = '_';
        if (p->inputs[k].labels) { /* a text key: its index, CF flags */
            SL_TRY_RETURN(e, sl_sweep_nc_text_input(s->nc, path, dm, &p->inputs[k], name, &s->nc_in[k], e));
            SL_TRY_RETURN(e, member_chunks(s, s->nc_in[k], 1, 1, sizeof(int), e));
            continue;
        }
        udunits_of_key(s->ids[k], units, sizeof units);
        SL_TRY_RETURN(e, def_double(s, name, 1, &dm, p->inputs[k].key, units, 0, &s->nc_in[k], e));
        SL_TRY_RETURN(e, member_chunks(s, s->nc_in[k], 1, 1, sizeof(double), e));
        sl_ens_input_describe(p, k, desc, sizeof desc);
        SL_TRY_RETURN(e, att(s, s->nc_in[k], "sampled_from", desc, e));
    }
    for (size_t j = 0; j < m->n_outputs; j++) {
        SL_TRY_RETURN(e, def_double(s, m->outputs[j].name, 1, &dm, m->outputs[j].long_name, m->outputs[j].units, 1,
                                    &s->nc_out[j], e));
        SL_TRY_RETURN(e, member_chunks(s, s->nc_out[j], 1, 1, sizeof(double), e));
        if (m->outputs[j].flag_meanings != NULL) { /* codes 0..n-1 (CF 3.5) */
            double codes[8];
            size_t nf = 0;
            for (const char *q = m->outputs[j].flag_meanings; *q && nf < 8; nf++) {
                codes[nf] = (double)nf;
                q += strcspn(q, " ");
                q += strspn(q, " ");
            }
            NCS(s, s->nc_out[j], "attribute", "flag_values",
                nc_put_att_double(s->nc, s->nc_out[j], "flag_values", NC_DOUBLE, nf, codes));
            SL_TRY_RETURN(e, att(s, s->nc_out[j], "flag_meanings", m->outputs[j].flag_meanings, e));
        }
    }
    if (nb > 0 || nt > 0) {
        NCS(s, NC_GLOBAL, "defining dimension", "percentile", nc_def_dim(s->nc, "percentile", np, &dp));
        SL_TRY_RETURN(e, def_double(s, "percentile", 1, &dp, "percentile over the successful members", "percent",
                                    0, &id, e));
    }
    if (nb > 0) {
        NCS(s, NC_GLOBAL, "defining dimension", "band", nc_def_dim(s->nc, "band", nb, &dbnd));
        NCS(s, NC_GLOBAL, "defining dimension", "nv", nc_def_dim(s->nc, "nv", 2, &dnv));
        SL_TRY_RETURN(e, def_double(s, "band", 1, &dbnd, "altitude of the band centre", "m", 0, &id, e));
        SL_TRY_RETURN(e, att(s, id, "standard_name", "altitude", e));
        SL_TRY_RETURN(e, att(s, id, "positive", "up", e));
        SL_TRY_RETURN(e, att(s, id, "axis", "Z", e));
        SL_TRY_RETURN(e, att(s, id, "bounds", "band_bnds", e));
        int db[2] = {dbnd, dnv};
        NCS(s, NC_GLOBAL, "defining variable", "band_bnds", nc_def_var(s->nc, "band_bnds", NC_DOUBLE, 2, db, &id));
        int dmb[2] = {dm, dbnd};
        NCS(s, NC_GLOBAL, "defining variable", "lofted_water_mass",
            nc_def_var(s->nc, "lofted_water_mass", NC_FLOAT, 2, dmb, &s->nc_prof));
        SL_TRY_RETURN(e, member_chunks(s, s->nc_prof, 2, nb, sizeof(float), e));
        float ff = ENS_NC_FILL_F;
        NCS(s, s->nc_prof, "attribute", "_FillValue", nc_put_att_float(s->nc, s->nc_prof, "_FillValue", NC_FLOAT, 1, &ff));
        SL_TRY_RETURN(e, att(s, s->nc_prof, "long_name",
                             "water (vapour and ice) lofted into each band by each member (the injection profile)", e));
        SL_TRY_RETURN(e, att(s, s->nc_prof, "units", "kg", e));
        int dpb[2] = {dp, dbnd};
        SL_TRY_RETURN(e, def_double(s, "lofted_water_mass_percentile", 2, dpb,
                                    "percentiles of the lofted water per band over the successful members "
                                    "(binned, within 1.2 %)", "kg", 1, &s->nc_pct_prof, e));
    }
    if (nt > 0) {
        NCS(s, NC_GLOBAL, "defining dimension", "time", nc_def_dim(s->nc, "time", nt, &dt));
        SL_TRY_RETURN(e, def_double(s, "time", 1, &dt, "time since the event", "days", 0, &id, e));
        SL_TRY_RETURN(e, att(s, id, "axis", "T", e));
        int dpt[2] = {dp, dt};
        SL_TRY_RETURN(e, def_double(s, "remaining_fraction_percentile", 2, dpt,
                                    "percentiles of the fraction of the stratospheric excess remaining, over the "
                                    "members where water entered (binned, within 1.2 %)", "1", 1, &s->nc_pct_rem, e));
    }
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "Conventions", "CF-1.11", e));
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "title",
                         s->rq->sweep ? "steamloft parameter sweep: key outputs per member"
                                      : "steamloft ensemble: key outputs per member", e));
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "source", sl_cli_version(), e));
    char buf[1024];
    int w = snprintf(buf, sizeof buf, "steamloft");
    for (int a = 1; a < s->g->full_argc && w > 0 && (size_t)w < sizeof buf; a++)
        w += snprintf(buf + w, sizeof buf - (size_t)w, " %s", s->g->full_argv[a]);
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "history", buf, e));
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "sampling", sampling_word(p), e));
    if (p->mode == SL_ENS_MONTE_CARLO) {
        snprintf(buf, sizeof buf, "%" PRIu64, p->seed);
        SL_TRY_RETURN(e, att(s, NC_GLOBAL, "seed", buf, e));
    }
    SL_TRY_RETURN(e, att(s, NC_GLOBAL, "comment", sl_cli_caution(), e));
    NCS(s, NC_GLOBAL, "ending definitions", "", nc_enddef(s->nc));
    /* Coordinates known now. */
    if (nb > 0 || nt > 0) {
        int vid;
        NCS(s, NC_GLOBAL, "finding", "percentile", nc_inq_varid(s->nc, "percentile", &vid));
        NCS(s, vid, "writing", "", nc_put_var_double(s->nc, vid, pct));
    }
    for (size_t b = 0; b < nb; b++) {
        int vc, vb;
        double mid = 0.5 * (c->band_bottom_m[b] + c->band_top_m[b]), bb[2] = {c->band_bottom_m[b], c->band_top_m[b]};
        size_t i1[1] = {b}, i2[2] = {b, 0}, c2[2] = {1, 2};
        NCS(s, NC_GLOBAL, "finding", "band", nc_inq_varid(s->nc, "band", &vc));
        NCS(s, NC_GLOBAL, "finding", "band_bnds", nc_inq_varid(s->nc, "band_bnds", &vb));
        NCS(s, vc, "writing", "", nc_put_var1_double(s->nc, vc, i1, &mid));
        NCS(s, vb, "writing", "", nc_put_vara_double(s->nc, vb, i2, c2, bb));
    }
    for (size_t t = 0; t < nt; t++) {
        int vt;
        double d = c->time_s[t] / SL_S_PER_DAY;
        size_t i1[1] = {t};
        NCS(s, NC_GLOBAL, "finding", "time", nc_inq_varid(s->nc, "time", &vt));
        NCS(s, vt, "writing", "", nc_put_var1_double(s->nc, vt, i1, &d));
    }
    size_t ni = p->n_inputs, no = m->n_outputs;
    s->buf_in = malloc((NC_BUF_ROWS * ni + 1) * sizeof *s->buf_in);
    s->buf_out = malloc((NC_BUF_ROWS * no + 1) * sizeof *s->buf_out);
    s->buf_prof = malloc((NC_BUF_ROWS * nb + 1) * sizeof *s->buf_prof);
    s->buf_st = malloc(NC_BUF_ROWS * sizeof *s->buf_st);
    s->buf_m = malloc(NC_BUF_ROWS * sizeof *s->buf_m);
    s->buf_reason = malloc((size_t)NC_BUF_ROWS * SL_ENS_REASON_LEN);
    if (!s->buf_in || !s->buf_out || !s->buf_prof || !s->buf_st || !s->buf_m || !s->buf_reason)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the netCDF buffer");
    return SL_OK;
}

int sl_ens_sink_open(sl_ens_sink *s, const sl_ens_request *rq, const sl_cli_globals *g, const sl_ens_plan *p,
                     const sl_ens_model *m, const sl_ens_chain *c, const int *ids, sl_err *e)
{
    memset(s, 0, sizeof *s);
    s->nc = -1;
    s->rq = rq;
    s->g = g;
    s->plan = p;
    s->model = m;
    s->chain = c;
    s->ids = ids;
    s->out_of_range = calloc(p->n_inputs + 1, sizeof *s->out_of_range);
    if (s->out_of_range == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    if (p->mode == SL_ENS_GRID && p->n_members <= SL_SWEEP_MAX_ROWS) {
        s->rows = calloc(1, sizeof *s->rows);
        if (s->rows == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        SL_TRY_RETURN(e, sl_sweep_rows_init(s->rows, p, m, e));
    }
    SL_TRY_RETURN(e, sl_ens_hist_init(&s->hprof, c->n_band, PROF_LO_LOG10, PROF_HI_LOG10, BINS_PER_DECADE, e));
    SL_TRY_RETURN(e, sl_ens_hist_init(&s->hrem, c->n_time, REM_LO_LOG10, REM_HI_LOG10, BINS_PER_DECADE, e));
    s->csv_stdout = rq->csv_path && strcmp(rq->csv_path, "-") == 0;
    if (rq->csv_path) {
        s->csv_name = s->csv_stdout ? "standard output" : rq->csv_path;
        if (s->csv_stdout) {
            s->csv = stdout;
        } else {
            const char *stage;
            SL_TRY_RETURN(e, sl_outset_begin_file(&s->set_csv, rq->csv_path, g->force, &stage, e));
            s->csv = fopen(stage, "w");
            if (s->csv == NULL)
                SL_FAIL_RETURN(e, SL_ECANTCREAT, "%s: %s", rq->csv_path, strerror(errno));
        }
        csv_header(s->csv, p, m);
    }
    if (rq->nc_path) {
        const char *stage;
        double pct[SL_ENS_MAX_PCT + 3];
        size_t np = sl_ens_percentile_list(rq, pct);
        SL_TRY_RETURN(e, sl_outset_begin_file(&s->set_nc, rq->nc_path, g->force, &stage, e));
        SL_TRY_RETURN(e, nc_define(s, stage, np, pct, e));
    }
    return SL_OK;
}

int sl_ens_sink_finish(sl_ens_sink *s, sl_err *e)
{
    if (s->nc >= 0) {
        SL_TRY_RETURN(e, nc_flush(s, e));
        double pct[SL_ENS_MAX_PCT + 3];
        size_t np = sl_ens_percentile_list(s->rq, pct);
        const sl_ens_hist *hs[2] = {&s->hprof, &s->hrem};
        int vars[2] = {s->nc_pct_prof, s->nc_pct_rem};
        for (int a = 0; a < 2; a++)
            for (size_t q = 0; q < np; q++)
                for (size_t k = 0; k < hs[a]->n_series; k++) {
                    double v = sl_ens_hist_percentile(hs[a], k, pct[q]);
                    size_t idx[2] = {q, k};
                    if (!isfinite(v))
                        v = ENS_NC_FILL;
                    NCS(s, vars[a], "writing", "", nc_put_var1_double(s->nc, vars[a], idx, &v));
                }
        int nrc = nc_close(s->nc);
        s->nc = -1;
        NCS(s, NC_GLOBAL, "closing", "", nrc);
    }
    if (s->csv) {
        FILE *f = s->csv;
        s->csv = NULL;
        if (s->csv_stdout) {
            if (fflush(f) != 0 || ferror(f))
                SL_FAIL_RETURN(e, SL_EIO, "standard output: write error");
        } else {
            SL_TRY_RETURN(e, sl_outset_fclose(&s->set_csv, s->set_csv.name[0], f, e));
            s->csv_closed = 1;
        }
    }
    return SL_OK;
}

int sl_ens_sink_commit(sl_ens_sink *s, sl_err *e)
{
    if (s->rq->nc_path)
        SL_TRY_RETURN(e, sl_outset_commit(&s->set_nc, e));
    if (s->csv_closed)
        SL_TRY_RETURN(e, sl_outset_commit(&s->set_csv, e));
    return SL_OK;
}

void sl_ens_sink_free(sl_ens_sink *s)
{
    if (s->csv && s->csv != stdout)
        fclose(s->csv);
    s->csv = NULL;
    if (s->nc >= 0)
        nc_close(s->nc);
    s->nc = -1;
    sl_outset_abort(&s->set_csv);
    sl_outset_abort(&s->set_nc);
    free(s->buf_in);
    free(s->buf_out);
    free(s->buf_prof);
    free(s->buf_st);
    free(s->buf_m);
    free(s->buf_reason);
    free(s->out_of_range);
    sl_sweep_rows_free(s->rows);
    free(s->rows);
    sl_ens_hist_free(&s->hprof);
    sl_ens_hist_free(&s->hrem);
    summary_free(s->summary);
    free(s->summary);
    s->summary = NULL;
    s->buf_in = s->buf_out = NULL;
    s->buf_prof = NULL;
    s->buf_st = s->buf_m = NULL;
    s->buf_reason = NULL;
    s->out_of_range = NULL;
}

/* ------------------------------------------------------------ summary */

/* Every number of the summary, computed before anything is written. */
struct sl_ens_summary {
    size_t np, no, ni;
    double pct[SL_ENS_MAX_PCT + 3];
    double *mean, *sd, *vals, *sens; /* no; no; no x np; 2 x no x ni (rho, then s1) */
    size_t *nok;
    double pe[SL_ENS_MAX_THR], se[SL_ENS_MAX_THR];
    size_t pe_n[SL_ENS_MAX_THR];
};

static void summary_free(summary *u)
{
    if (u == NULL)
        return;
    free(u->mean);
    free(u->sd);
    free(u->vals);
    free(u->sens);
    free(u->nok);
}

static int summary_compute(summary *u, const sl_ens_sink *s, const sl_ens_result *r, const sl_ens_threshold *thr,
                           const int *thr_out, sl_err *e)
{
    memset(u, 0, sizeof *u);
    u->np = sl_ens_percentile_list(s->rq, u->pct);
    u->no = s->model->n_outputs;
    u->ni = s->plan->n_inputs;
    u->mean = malloc((u->no + 1) * sizeof *u->mean);
    u->sd = malloc((u->no + 1) * sizeof *u->sd);
    u->vals = malloc((u->no * u->np + 1) * sizeof *u->vals);
    u->sens = malloc((2 * u->no * u->ni + 1) * sizeof *u->sens);
    u->nok = malloc((u->no + 1) * sizeof *u->nok);
    if (!u->mean || !u->sd || !u->vals || !u->sens || !u->nok)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the summary");
    for (size_t j = 0; j < u->no; j++) {
        SL_TRY_RETURN(e, sl_ens_mean_sd(r, j, &u->mean[j], &u->sd[j], &u->nok[j], e));
        SL_TRY_RETURN(e, sl_ens_percentiles(r, j, u->pct, u->np, u->vals + j * u->np, &u->nok[j], e));
    }
    if (u->ni > 0)
        SL_TRY_RETURN(e, sl_ens_sensitivity(r, u->sens, u->sens + u->ni * u->no, e));
    /* A text key's value is an index without order: no rank correlation
     * (its first-order share, from classes of equal values, stays in JSON). */
    for (size_t k = 0; k < u->ni; k++)
        if (s->plan->inputs[k].labels)
            for (size_t j = 0; j < u->no; j++)
                u->sens[j * u->ni + k] = NAN;
    for (size_t t = 0; t < s->rq->nthr; t++)
        SL_TRY_RETURN(e, sl_ens_exceedance(r, (size_t)thr_out[t], &thr[t], &u->pe[t], &u->se[t], &u->pe_n[t], e));
    return SL_OK;
}

static const char *op_text(const sl_ens_threshold *t)
{
    return t->op == '>' ? ">" : t->op == 'g' ? ">=" : t->op == '<' ? "<" : "<=";
}

static void range_text(int id, char *buf, size_t n)
{
    sl_scenario_range_text((sl_param_id)id, buf, n);
}

static void summary_json(FILE *f, const sl_ens_sink *s, const sl_ens_result *r, const summary *u,
                         const sl_ens_threshold *thr, sl_report *rep)
{
    const sl_ens_request *c = s->rq;
    const sl_ens_plan *p = s->plan;
    const sl_ens_model *m = s->model;
    sl_report_begin(rep, f, 1);
    sl_report_string(rep, "steamloft", sl_cli_version(), "");
    sl_report_string(rep, "command", c->cmd, "");
    sl_report_string(rep, "scenario", c->scenario, "");
    sl_report_string(rep, "sampling", sampling_word(p), "");
    if (p->mode == SL_ENS_MONTE_CARLO)
        sl_report_number(rep, "seed", (double)p->seed, "", 1, "");
    sl_report_number(rep, "members", (double)r->n_members, "", 1, "");
    sl_report_number(rep, "ok", (double)(r->n_members - r->n_failed), "", 1, "");
    sl_report_number(rep, "failed", (double)r->n_failed, "", 1, "");
    if (r->n_failed) {
        sl_report_begin_object(rep, "first_failure", NULL);
        sl_report_number(rep, "member", (double)r->first_failed_member, "", 1, "");
        sl_report_string(rep, "reason", r->first_failure, "");
        sl_report_end_object(rep);
    }
    sl_report_begin_array(rep, "inputs", NULL);
    for (size_t k = 0; k < p->n_inputs; k++) {
        char desc[160], range[96];
        sl_ens_input_describe(p, k, desc, sizeof desc);
        range_text(s->ids[k], range, sizeof range);
        sl_report_begin_object(rep, NULL, NULL);
        sl_report_string(rep, "key", p->inputs[k].key, "");
        sl_report_string(rep, "distribution", desc, "");
        sl_report_string(rep, "valid_range", range, "");
        sl_report_number(rep, "members_out_of_range", (double)s->out_of_range[k], "", 1, "");
        sl_report_string(rep, "truncation", "rejected: such members fail and are left out of the statistics", "");
        sl_report_end_object(rep);
    }
    sl_report_end_array(rep);
    sl_report_begin_object(rep, "outputs", NULL);
    for (size_t j = 0; j < u->no; j++) {
        sl_report_begin_object(rep, m->outputs[j].name, NULL);
        sl_report_number(rep, "n_ok", (double)u->nok[j], "", 1, "");
        sl_report_number(rep, "mean", u->mean[j], "", 1, "");
        sl_report_number(rep, "sd", u->sd[j], "", 1, "");
        sl_report_begin_object(rep, "percentiles", NULL);
        for (size_t q = 0; q < u->np; q++) {
            char key[32];
            snprintf(key, sizeof key, "%g", u->pct[q]);
            sl_report_number(rep, key, u->vals[j * u->np + q], "", 1, "");
        }
        sl_report_end_object(rep);
        for (int which = 0; which < 2; which++) {
            sl_report_begin_object(rep, which ? "first_order" : "spearman", NULL);
            for (size_t k = 0; k < u->ni; k++)
                sl_report_number(rep, p->inputs[k].key, u->sens[which * u->ni * u->no + j * u->ni + k], "", 1, "");
            sl_report_end_object(rep);
        }
        sl_report_end_object(rep);
    }
    sl_report_end_object(rep);
    sl_report_begin_array(rep, "exceedance", NULL);
    for (size_t t = 0; t < c->nthr; t++) {
        sl_report_begin_object(rep, NULL, NULL);
        sl_report_string(rep, "output", thr[t].name, "");
        sl_report_string(rep, "op", op_text(&thr[t]), "");
        sl_report_number(rep, "threshold", thr[t].value, "", 1, "");
        sl_report_number(rep, "probability", u->pe[t], "", 1, "");
        sl_report_number(rep, "standard_error", u->se[t], "", 1, "");
        sl_report_number(rep, "n_ok", (double)u->pe_n[t], "", 1, "");
        sl_report_end_object(rep);
    }
    sl_report_end_array(rep);
    sl_report_number(rep, "ranks", r->mpi_ranks, "", 1, "");
    sl_report_number(rep, "threads", r->threads, "", 1, "");
    sl_report_number(rep, "wall_s", r->wall_s, "", 1, "");
    if (s->rows)
        sl_sweep_rows_json(rep, p, s->rows);
    sl_report_string(rep, "caution", sl_cli_caution(), "");
}

static void summary_text(FILE *f, const sl_ens_sink *s, const sl_ens_result *r, const summary *u,
                         const sl_ens_threshold *thr)
{
    const sl_ens_request *c = s->rq;
    const sl_ens_plan *p = s->plan;
    const sl_ens_model *m = s->model;
    const char *mode = p->mode == SL_ENS_GRID ? "grid sweep" : p->mode == SL_ENS_SOBOL ? "Sobol" : "Monte Carlo";
    fprintf(f, "steamloft %s: %s, %zu members", c->cmd, c->scenario, r->n_members);
    if (p->mode == SL_ENS_MONTE_CARLO)
        fprintf(f, " (Monte Carlo, seed %" PRIu64 ")", p->seed);
    else
        fprintf(f, " (%s)", mode);
    fprintf(f, "; %zu ok, %zu failed\n", r->n_members - r->n_failed, r->n_failed);
    if (r->n_failed)
        fprintf(f, "first failure: member %zu: %s\n", r->first_failed_member, r->first_failure);
    fprintf(f, "%s:\n", p->mode == SL_ENS_GRID ? "swept inputs" : "uncertain inputs");
    for (size_t k = 0; k < p->n_inputs; k++) {
        char desc[160];
        sl_ens_input_describe(p, k, desc, sizeof desc);
        fprintf(f, "  %-36s %s\n", p->inputs[k].key, desc);
    }
    for (size_t k = 0; k < p->n_inputs; k++)
        if (s->out_of_range[k]) {
            char range[96];
            range_text(s->ids[k], range, sizeof range);
            fprintf(f, "  %s: %zu members (%.3g %%) drew values outside the valid range %s; "
                       "truncation: rejected (they fail and are left out of the statistics)\n",
                    p->inputs[k].key, s->out_of_range[k],
                    100.0 * (double)s->out_of_range[k] / (double)(r->n_members ? r->n_members : 1), range);
        }
    fprintf(f, "\n%-28s %8s %11s %11s", "output", "n_ok", "mean", "sd");
    for (size_t q = 0; q < u->np; q++) {
        char h[16];
        snprintf(h, sizeof h, "p%g", u->pct[q]);
        fprintf(f, " %11s", h);
    }
    fputc('\n', f);
    for (size_t j = 0; j < u->no; j++) {
        fprintf(f, "%-28s %8zu %11.4g %11.4g", m->outputs[j].name, u->nok[j], u->mean[j], u->sd[j]);
        for (size_t q = 0; q < u->np; q++)
            fprintf(f, " %11.4g", u->vals[j * u->np + q]);
        fputc('\n', f);
    }
    if (c->nthr) {
        fprintf(f, "\nexceedance (fraction of successful members; +- binomial standard error):\n");
        for (size_t t = 0; t < c->nthr; t++)
            fprintf(f, "  P(%s %s %g) = %.4g +- %.2g  (n = %zu)\n", thr[t].name, op_text(&thr[t]), thr[t].value,
                    u->pe[t], u->se[t], u->pe_n[t]);
    }
    size_t ni = u->ni;
    if (ni > 0) {
        fprintf(f, "\nwhat drives the spread: Spearman rank correlation / first-order variance "
                   "share\n(Sobol' index from the members) of each input, strongest correlation "
                   "first:\n");
        for (size_t j = 0; j < u->no; j++) {
            const double *rho = u->sens + j * ni, *s1 = u->sens + ni * u->no + j * ni;
            size_t ord[SL_P_COUNT + SL_ENS_MAX_VARY];
            for (size_t k = 0; k < ni; k++)
                ord[k] = k;
            for (size_t a = 1; a < ni; a++)
                for (size_t b = a; b > 0; b--) {
                    double x = isnan(rho[ord[b]]) ? -1 : fabs(rho[ord[b]]);
                    double y = isnan(rho[ord[b - 1]]) ? -1 : fabs(rho[ord[b - 1]]);
                    if (x <= y)
                        break;
                    size_t t = ord[b];
                    ord[b] = ord[b - 1];
                    ord[b - 1] = t;
                }
            fprintf(f, "  %-28s", m->outputs[j].name);
            for (size_t k = 0; k < ni; k++) {
                const char *key = strchr(p->inputs[ord[k]].key, '.');
                key = key ? key + 1 : p->inputs[ord[k]].key;
                if (isnan(rho[ord[k]]))
                    fprintf(f, "%s %s n/a", k ? "," : "", key);
                else if (isnan(s1[ord[k]]))
                    fprintf(f, "%s %s %+.2f/n/a", k ? "," : "", key, rho[ord[k]]);
                else
                    fprintf(f, "%s %s %+.2f/%.2f", k ? "," : "", key, rho[ord[k]],
                            fmax(s1[ord[k]], 0.0)); /* below 0 is sampling noise */
            }
            fputc('\n', f);
        }
    }
    fprintf(f, "\n%zu members in %.3g s on %d rank%s x %d thread%s (%.4g members/s)\n", r->n_members, r->wall_s,
            r->mpi_ranks, r->mpi_ranks == 1 ? "" : "s", r->threads, r->threads == 1 ? "" : "s",
            r->wall_s > 0 ? (double)r->n_members / r->wall_s : 0.0);
    fprintf(f, "%s\n", sl_cli_caution());
}

int sl_ens_sink_summarize(sl_ens_sink *s, const sl_ens_result *r, const sl_ens_threshold *thr, const int *thr_out,
                          sl_err *e)
{
    summary *u = calloc(1, sizeof *u);
    if (u == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the summary");
    s->summary = u;
    return summary_compute(u, s, r, thr, thr_out, e);
}

int sl_ens_summary_write(FILE *f, const sl_ens_sink *s, const sl_ens_result *r, const sl_ens_threshold *thr,
                         sl_err *e)
{
    const summary *u = s->summary;
    if (u == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "the summary was not computed");
    if (s->rq->json) {
        sl_report rep;
        summary_json(f, s, r, u, thr, &rep);
        return sl_report_end(&rep, e);
    }
    if (s->rows) /* a sweep of at most SL_SWEEP_MAX_ROWS points: a row each */
        return sl_sweep_rows_text(f, s->rq->scenario, s->plan, s->rows, e);
    summary_text(f, s, r, u, thr);
    if (s->plan->mode == SL_ENS_GRID)
        fprintf(f, "(%zu grid points: the statistics above; one row per point is in the CSV, -o FILE.csv)\n",
                r->n_members);
    if (fflush(f) != 0 || ferror(f))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the summary");
    return SL_OK;
}

/* ------------------------------------------------------------ plots */

int sl_ens_plot_write(const sl_ens_sink *s, const char *dir, int quiet, sl_err *e)
{
    const sl_ens_chain *c = s->chain;
    size_t nb = c->n_band, nt = c->n_time;
    if (nb == 0 && nt == 0)
        SL_FAIL_RETURN(e, SL_EDATA, "--plot %s: the run on the inputs' medians failed, so the ensemble has no "
                       "profile layout or time axis to plot", dir);
    double *buf = malloc((3 * nb + 3 * nt + 1) * sizeof *buf);
    if (buf == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the ensemble plot");
    double *w[3] = {buf, buf + nb, buf + 2 * nb}, *f[3] = {buf + 3 * nb, buf + 3 * nb + nt, buf + 3 * nb + 2 * nt};
    const double pp[3] = {5.0, 50.0, 95.0};
    for (int q = 0; q < 3; q++) {
        for (size_t b = 0; b < nb; b++) {
            double v = sl_ens_hist_percentile(&s->hprof, b, pp[q]);
            w[q][b] = isfinite(v) ? v : 0.0;
        }
        for (size_t t = 0; t < nt; t++) {
            double v = sl_ens_hist_percentile(&s->hrem, t, pp[q]);
            f[q][t] = isfinite(v) ? fmin(v, 1.0) : 0.0;
        }
    }
    /* The plot's title is the scenario's name, as on a run's plots. */
    char title[SL_SCENARIO_RAW_LEN];
    if (c->base != NULL)
        sl_scenario_name(c->base, title, sizeof title);
    else
        snprintf(title, sizeof title, "%s", s->rq->scenario);
    sl_plot_ensemble_view v = {title, s->n_ok, nb, c->band_bottom_m, c->band_top_m, w[0], w[1], w[2],
                               c->tropopause_m, nt, c->time_s, f[0], f[1], f[2]};
    sl_plot_options po = {s->g->force, 1, NULL};
    sl_plot_result res;
    memset(&res, 0, sizeof res);
    int rc = sl_plot_ensemble(dir, &v, &po, &res, e);
    free(buf);
    if (rc == SL_OK && res.warning[0] && !quiet)
        fprintf(stderr, "steamloft: warning: %s\n", res.warning);
    return rc;
}
