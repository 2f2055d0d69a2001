/* sweep_rows: text keys on `sweep --vary` and one row per grid point (see
 * include/steamloft/sweep_rows.h).  No physics here. */
#include "steamloft/sweep_rows.h"

#include "steamloft/atmosphere.h"
#include "steamloft/cli.h"
#include "steamloft/plume.h"

#include <ctype.h>
#include <math.h>
#include <netcdf.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

const char *sl_ens_input_label(const sl_ens_plan *p, size_t k, double x)
{
    const sl_ens_input *in = &p->inputs[k];
    if (in->labels == NULL || !(x >= 0) || x >= (double)in->n_labels)
        return NULL;
    return in->labels[(size_t)x];
}

void sl_ens_input_describe(const sl_ens_plan *p, size_t k, char *buf, size_t n)
{
    const sl_ens_input *in = &p->inputs[k];
    if (in->labels == NULL) {
        sl_dist_describe(&in->dist, buf, n);
        return;
    }
    int w = snprintf(buf, n, "values");
    for (size_t i = 0; i < in->n_labels && w > 0 && (size_t)w < n; i++)
        w += snprintf(buf + w, n - (size_t)w, "%s %s", i ? "," : "", in->labels[i]);
}

int sl_sweep_is_text_key(const char *spec, int *id)
{
    const char *eq = strchr(spec, '=');
    char key[SL_ENS_KEY_LEN];
    if (eq == NULL || (size_t)(eq - spec) >= sizeof key)
        return 0;
    memcpy(key, spec, (size_t)(eq - spec));
    key[eq - spec] = '\0';
    *id = sl_scenario_find(key);
    return *id >= 0 && (sl_scenario_params[*id].type == SL_PT_TEXT || sl_scenario_params[*id].type == SL_PT_CHOICE);
}

/* Whether VALUE is what key ID takes, as its reader checks it; a message
 * naming the valid values otherwise. */
static int check_value(const sl_scenario *sc, int id, const char *key, const char *value, sl_err *e)
{
    const sl_param_def *d = &sl_scenario_params[id];
    char range[200];
    sl_scenario_range_text((sl_param_id)id, range, sizeof range);
    if (d->type == SL_PT_CHOICE || (d->flags & SL_PF_DATE)) {
        sl_scenario *t = malloc(sizeof *t);
        if (t == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        *t = *sc;
        t->kind = SL_SCENARIO_NONE; /* the section check comes with the scenario's own finish */
        sl_err inner;
        sl_err_clear(&inner);
        int rc = sl_scenario_set_text(t, (sl_param_id)id, value, &inner);
        free(t);
        if (rc != SL_OK)
            SL_FAIL_RETURN(e, SL_EUSAGE, "--vary %s: '%s' is not a value of %s (valid: %s)", key, value, key,
                           d->type == SL_PT_CHOICE ? range : "an ISO 8601 date, e.g. 2022-01-15");
        return SL_OK;
    }
    if (id != SL_P_SITE_ATMOSPHERE)
        return SL_OK; /* free text (a name) */
    for (int i = 0; sl_atmosphere_builtin_names[i] && i < SL_ATMOSPHERE_MAX_BUILTINS; i++)
        if (strcmp(value, sl_atmosphere_builtin_names[i]) == 0)
            return SL_OK;
    /* A profile file: read it once here, serially, as the chain would. */
    sl_atmosphere *a = calloc(1, sizeof *a);
    if (a == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    sl_err inner;
    sl_err_clear(&inner);
    int rc = sl_atmosphere_init(a, value, &inner);
    sl_atmosphere_free(a);
    free(a);
    if (rc == SL_OK)
        return SL_OK;
    char names[200] = "";
    for (int i = 0; sl_atmosphere_builtin_names[i] && i < SL_ATMOSPHERE_MAX_BUILTINS; i++) {
        size_t used = strlen(names);
        snprintf(names + used, sizeof names - used, "%s%s", i ? ", " : "", sl_atmosphere_builtin_names[i]);
    }
    if (access(value, F_OK) != 0)
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "--vary %s: '%s' is neither a built-in profile nor a file (valid: one of %s "
                       "(steamloft atmos), or a profile file)",
                       key, value, names);
    SL_FAIL_RETURN(e, SL_EUSAGE, "--vary %s: profile file '%s' does not read: %.300s (valid: one of %s, or a "
                   "profile file)", key, value, inner.msg, names);
}

int sl_sweep_file_profiles(const sl_ens_plan *p, const int *ids)
{
    for (size_t k = 0; k < p->n_inputs; k++) {
        if (ids[k] != SL_P_SITE_ATMOSPHERE || p->inputs[k].labels == NULL)
            continue;
        for (size_t i = 0; i < p->inputs[k].n_labels; i++) {
            int builtin = 0;
            for (int b = 0; sl_atmosphere_builtin_names[b] && b < SL_ATMOSPHERE_MAX_BUILTINS; b++)
                builtin |= strcmp(p->inputs[k].labels[i], sl_atmosphere_builtin_names[b]) == 0;
            if (!builtin)
                return 1;
        }
    }
    return 0;
}

int sl_sweep_add_text_input(const sl_scenario *sc, sl_ens_plan *p, int *ids, int id, const char *key,
                            const char *values, sl_err *e)
{
    size_t cap = 1;
    for (const char *q = values; *q; q++)
        cap += *q == ',';
    if (cap > 10000)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--vary %s: more than 10000 values", key);
    char **lab = calloc(cap, sizeof *lab);
    double *idx = malloc(cap * sizeof *idx);
    int rc = lab && idx ? SL_OK : sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory");
    size_t n = 0;
    for (const char *s = values; rc == SL_OK;) {
        const char *c = strchr(s, ',');
        size_t l = c ? (size_t)(c - s) : strlen(s);
        while (l > 0 && isspace((unsigned char)*s)) {
            s++;
            l--;
        }
        while (l > 0 && isspace((unsigned char)s[l - 1]))
            l--;
        if (l == 0 || l >= SL_SCENARIO_RAW_LEN) {
            rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__, "--vary %s: value %zu is %s (expected %s=V1,V2,...)",
                            key, n + 1, l ? "too long" : "empty", key);
            break;
        }
        lab[n] = malloc(l + 1);
        if (lab[n] == NULL) {
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory");
            break;
        }
        memcpy(lab[n], s, l);
        lab[n][l] = '\0';
        for (size_t k = 0; k < n && rc == SL_OK; k++)
            if (strcmp(lab[k], lab[n]) == 0)
                rc = sl_err_set(e, SL_EUSAGE, __func__, __LINE__, "--vary %s: '%s' is given twice", key, lab[n]);
        idx[n] = (double)n;
        n++;
        if (rc == SL_OK)
            rc = check_value(sc, id, key, lab[n - 1], e);
        if (c == NULL)
            break;
        s = c + 1;
    }
    if (rc == SL_OK) {
        sl_dist d;
        memset(&d, 0, sizeof d);
        d.kind = SL_DIST_CHOICE;
        d.values = idx;
        d.n_values = n;
        idx = NULL;
        ids[p->n_inputs] = id;
        rc = sl_ens_plan_add(p, key, 1.0, &d, e);
        sl_dist_free(&d);
        if (rc == SL_OK) {
            p->inputs[p->n_inputs - 1].labels = lab;
            p->inputs[p->n_inputs - 1].n_labels = n;
            lab = NULL;
        }
    }
    if (lab)
        for (size_t k = 0; k < n; k++)
            free(lab[k]);
    free(lab);
    free(idx);
    return rc;
}

/* ------------------------------------------------------------ rows */

/* The key outputs of a row, by their ensemble names. */
static const char *const row_outputs[SL_SWEEP_ROW_OUT] = {"energy_at_sea_Mt", "stratospheric_water_Tg",
                                                          "percent_of_background", "efolding_years"};

int sl_sweep_rows_init(sl_sweep_rows *r, const sl_ens_plan *p, const sl_ens_model *m, sl_err *e)
{
    memset(r, 0, sizeof *r);
    size_t n = p->n_members, ni = p->n_inputs;
    for (int q = 0; q < SL_SWEEP_ROW_OUT; q++) {
        r->col[q] = -1;
        for (size_t j = 0; j < m->n_outputs; j++)
            if (strcmp(m->outputs[j].name, row_outputs[q]) == 0)
                r->col[q] = (int)j;
    }
    r->in = calloc(n * ni + 1, sizeof *r->in);
    r->out = calloc(n * SL_SWEEP_ROW_OUT + 1, sizeof *r->out);
    r->status = calloc(n + 1, sizeof *r->status);
    r->regime = calloc(n + 1, sizeof *r->regime);
    r->extrapolated = calloc(n + 1, sizeof *r->extrapolated);
    r->widest = calloc(n + 1, sizeof *r->widest);
    r->reason = calloc((n + 1) * SL_ENS_REASON_LEN, 1);
    if (!r->in || !r->out || !r->status || !r->regime || !r->extrapolated || !r->widest || !r->reason) {
        sl_sweep_rows_free(r);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the sweep's rows");
    }
    r->n = n;
    r->ni = ni;
    return SL_OK;
}

void sl_sweep_rows_add(sl_sweep_rows *r, size_t m, const double *in, const double *out, const double *tail,
                       int status, const char *reason)
{
    if (m >= r->n)
        return;
    int ok = status == SL_OK;
    memcpy(r->in + m * r->ni, in, r->ni * sizeof *in);
    for (int q = 0; q < SL_SWEEP_ROW_OUT; q++)
        r->out[m * SL_SWEEP_ROW_OUT + (size_t)q] = ok && r->col[q] >= 0 ? out[r->col[q]] : NAN;
    r->status[m] = status;
    r->n_failed += !ok;
    r->regime[m] = ok && isfinite(tail[0]) ? (int)tail[0] : -1;
    r->extrapolated[m] = ok && tail[1] > 0.5;
    r->widest[m] = ok && isfinite(tail[2]) ? tail[2] : 0.0;
    snprintf(r->reason + m * SL_ENS_REASON_LEN, SL_ENS_REASON_LEN, "%s", reason ? reason : "");
}

void sl_sweep_rows_free(sl_sweep_rows *r)
{
    if (r == NULL)
        return;
    free(r->in);
    free(r->out);
    free(r->status);
    free(r->regime);
    free(r->extrapolated);
    free(r->widest);
    free(r->reason);
    memset(r, 0, sizeof *r);
}

static void input_text(const sl_ens_plan *p, size_t k, double x, char *buf, size_t n)
{
    const char *l = sl_ens_input_label(p, k, x);
    if (l)
        snprintf(buf, n, "%s", l);
    else
        snprintf(buf, n, "%.6g", x);
}

int sl_sweep_rows_text(FILE *f, const char *scenario, const sl_ens_plan *p, const sl_sweep_rows *r, sl_err *e)
{
    size_t ni = r->ni;
    int w[SL_P_COUNT + 16];
    for (size_t k = 0; k < ni && k < sizeof w / sizeof w[0]; k++) {
        const char *dot = strchr(p->inputs[k].key, '.');
        w[k] = (int)strlen(dot ? dot + 1 : p->inputs[k].key);
        for (size_t mi = 0; mi < r->n; mi++) {
            char b[SL_SCENARIO_RAW_LEN];
            input_text(p, k, r->in[mi * ni + k], b, sizeof b);
            int l = (int)strlen(b);
            w[k] = l > w[k] ? (l > 40 ? 40 : l) : w[k];
        }
    }
    fprintf(f, "steamloft sweep: %s, %zu grid points; %zu ok, %zu failed\n\n", scenario, r->n, r->n - r->n_failed,
            r->n_failed);
    for (size_t k = 0; k < ni; k++)
        fprintf(f, "%-*s  ", w[k], "");
    fprintf(f, "%-8s %9s %11s %9s %9s\n", "", "at sea", "above trop", "of bkgd", "e-fold");
    for (size_t k = 0; k < ni; k++) {
        const char *dot = strchr(p->inputs[k].key, '.');
        fprintf(f, "%-*s  ", w[k], dot ? dot + 1 : p->inputs[k].key);
    }
    fprintf(f, "%-8s %9s %11s %9s %9s  %s\n", "regime", "Mt TNT", "Tg water", "%", "years", "validity");
    for (size_t mi = 0; mi < r->n; mi++) {
        for (size_t k = 0; k < ni; k++) {
            char b[SL_SCENARIO_RAW_LEN];
            input_text(p, k, r->in[mi * ni + k], b, sizeof b);
            fprintf(f, "%-*.*s  ", w[k], w[k], b);
        }
        if (r->status[mi] != SL_OK) {
            fprintf(f, "%-8s %s\n", "FAILED", r->reason + mi * SL_ENS_REASON_LEN);
            continue;
        }
        char v[SL_SWEEP_ROW_OUT][32], vs[64], vl[320];
        for (int q = 0; q < SL_SWEEP_ROW_OUT; q++)
            sl_output_fmt3(v[q], sizeof v[q], r->out[mi * SL_SWEEP_ROW_OUT + (size_t)q]);
        int rg = r->regime[mi];
        sl_output_validity(rg >= 0, rg, r->widest[mi], r->extrapolated[mi], vs, sizeof vs, vl, sizeof vl);
        fprintf(f, "%-8s %9s %11s %9s %9s  %s\n", rg >= 0 ? sl_plume_regime_name(rg) : "none", v[0], v[1], v[2],
                v[3], vs);
    }
    fprintf(f, "\n%s\n", sl_cli_caution());
    if (fflush(f) != 0 || ferror(f))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the sweep's rows");
    return SL_OK;
}

void sl_sweep_rows_json(sl_report *rep, const sl_ens_plan *p, const sl_sweep_rows *r)
{
    size_t ni = r->ni;
    sl_report_begin_array(rep, "rows", NULL);
    for (size_t mi = 0; mi < r->n; mi++) {
        sl_report_begin_object(rep, NULL, NULL);
        sl_report_number(rep, "member", (double)mi, "", 1, "");
        for (size_t k = 0; k < ni; k++) {
            double x = r->in[mi * ni + k];
            const char *l = sl_ens_input_label(p, k, x);
            if (l)
                sl_report_string(rep, p->inputs[k].key, l, "");
            else
                sl_report_number(rep, p->inputs[k].key, x, "", 1, "");
        }
        int ok = r->status[mi] == SL_OK;
        sl_report_string(rep, "status", ok ? "ok" : "failed", "");
        if (!ok) {
            sl_report_string(rep, "reason", r->reason + mi * SL_ENS_REASON_LEN, "");
            sl_report_end_object(rep);
            continue;
        }
        int rg = r->regime[mi];
        char vs[64], vl[320];
        sl_output_validity(rg >= 0, rg, r->widest[mi], r->extrapolated[mi], vs, sizeof vs, vl, sizeof vl);
        sl_report_string(rep, "regime", rg >= 0 ? sl_plume_regime_name(rg) : "none", "");
        for (int q = 0; q < SL_SWEEP_ROW_OUT; q++)
            sl_report_number(rep, row_outputs[q], r->out[mi * SL_SWEEP_ROW_OUT + (size_t)q], "", 1, "");
        sl_report_string(rep, "validity", vl, "");
        sl_report_end_object(rep);
    }
    sl_report_end_array(rep);
}

/* ------------------------------------------------------------ netCDF */

#define NCT(call, what)                                                                                      \
    do {                                                                                                     \
        int nc_rc_ = (call);                                                                                 \
        if (nc_rc_ != NC_NOERR)                                                                              \
            SL_FAIL_RETURN(e, SL_EIO, "%s: %s %s: %s", path, what, name, nc_strerror(nc_rc_));               \
    } while (0)

int sl_sweep_nc_text_input(int ncid, const char *path, int dim, const sl_ens_input *in, const char *name,
                           int *varid, sl_err *e)
{
    NCT(nc_def_var(ncid, name, NC_INT, 1, &dim, varid), "defining variable");
    NCT(nc_put_att_text(ncid, *varid, "long_name", strlen(in->key), in->key), "attribute long_name of");
    size_t total = 1;
    for (size_t i = 0; i < in->n_labels; i++)
        total += strlen(in->labels[i]) + 1;
    char *meanings = malloc(total), *values = malloc(total);
    int *flags = malloc((in->n_labels + 1) * sizeof *flags);
    if (!meanings || !values || !flags) {
        free(meanings);
        free(values);
        free(flags);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    }
    size_t a = 0, b = 0;
    for (size_t i = 0; i < in->n_labels; i++) {
        flags[i] = (int)i;
        for (const char *s = in->labels[i]; *s; s++) {
            /* CF: flag_meanings are blank-separated words of letters, digits, _ - . + @ */
            unsigned char ch = (unsigned char)*s;
            meanings[a++] = isalnum(ch) || strchr("_-.+@", ch) ? (char)ch : '_';
            values[b++] = *s;
        }
        meanings[a++] = i + 1 < in->n_labels ? ' ' : '\0';
        values[b++] = i + 1 < in->n_labels ? ';' : '\0';
    }
    if (in->n_labels == 0)
        meanings[0] = values[0] = '\0';
    int rc = nc_put_att_int(ncid, *varid, "flag_values", NC_INT, in->n_labels, flags);
    if (rc == NC_NOERR)
        rc = nc_put_att_text(ncid, *varid, "flag_meanings", strlen(meanings), meanings);
    if (rc == NC_NOERR)
        rc = nc_put_att_text(ncid, *varid, "values", strlen(values), values);
    free(meanings);
    free(values);
    free(flags);
    NCT(rc, "attributes of");
    return SL_OK;
}
