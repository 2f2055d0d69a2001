/* batch: many scenarios through the chain, one row each (see
 * include/steamloft/batch.h; the command is src/cmd_tabulate.c). */
#include "steamloft/batch.h"
#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/json.h"
#include "steamloft/units.h"

#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#ifdef _OPENMP
#include <omp.h>
#endif

enum { MAX_COLUMNS = SL_P_COUNT, MAX_LINE = 8192 };

/* A CSV table: its path and the scenario key of each column. */
struct sl_batch_table {
    char path[SL_SCENARIO_PATH_LEN];
    char stem[96];            /* file name without folders and extension */
    int ncol;
    int col_id[MAX_COLUMNS];  /* scenario key of each column */
};

static int add_job(sl_batch *l, sl_batch_item j, sl_err *e)
{
    if (l->n >= SL_BATCH_MAX_SCENARIOS)
        SL_FAIL_RETURN(e, SL_EUSAGE, "more than %d scenarios: split the table", SL_BATCH_MAX_SCENARIOS);
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        sl_batch_item *p = realloc(l->item, cap * sizeof *p);
        if (p == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        l->item = p;
        l->cap = cap;
    }
    l->item[l->n++] = j;
    return SL_OK;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    return n > m && strcmp(s + n - m, suffix) == 0;
}

/* Split one CSV line in place: fields separated by commas, optionally in
 * double quotes ("" inside quotes is one quote).  Returns the number of
 * fields (at most MAX), or -1 for an unterminated quote. */
static int split_csv(char *line, char **field, int max)
{
    int n = 0;
    char *p = line;
    for (;;) {
        while (*p == ' ' || *p == '\t')
            p++;
        char *out = p, *start = p;
        if (*p == '"') {
            p++;
            for (;;) {
                if (*p == '\0')
                    return -1;
                if (*p == '"' && p[1] == '"') {
                    *out++ = '"';
                    p += 2;
                } else if (*p == '"') {
                    p++;
                    break;
                } else
                    *out++ = *p++;
            }
            while (*p == ' ' || *p == '\t')
                p++;
            if (*p != ',' && *p != '\0')
                return -1;
        } else {
            while (*p != ',' && *p != '\0')
                *out++ = *p++;
            while (out > start && (out[-1] == ' ' || out[-1] == '\t'))
                out--;
        }
        char end = *p;
        *out = '\0';
        if (n < max)
            field[n] = start;
        n++;
        if (end == '\0')
            return n;
        p++;
    }
}

static void chomp(char *s)
{
    size_t n = strlen(s);
    while (n > 0 && (s[n - 1] == '\n' || s[n - 1] == '\r'))
        s[--n] = '\0';
}

static int blank_or_comment(const char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    return *s == '\0' || *s == '#';
}

/* Read a table: check its header, add one job per data row. */
static int add_table(sl_batch *l, const char *path, sl_err *e)
{
    FILE *f = fopen(path, "r");
    if (f == NULL)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open the table: %s", path, strerror(errno));
    sl_batch_table *t = calloc(1, sizeof *t);
    char *line = malloc(MAX_LINE + 2);
    sl_batch_table **tp = realloc(l->table, (l->ntables + 1) * sizeof *tp);
    if (t == NULL || line == NULL || tp == NULL) {
        free(t);
        free(line);
        if (tp)
            l->table = tp;
        fclose(f);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    }
    l->table = tp;
    l->table[l->ntables++] = t;
    snprintf(t->path, sizeof t->path, "%s", path);
    sl_scenario_path_stem(path, t->stem, sizeof t->stem);
    int rc = SL_OK, lineno = 0, have_header = 0, rows = 0;
    while (rc == SL_OK && fgets(line, MAX_LINE + 2, f) != NULL) {
        lineno++;
        if (strlen(line) > MAX_LINE && strchr(line, '\n') == NULL) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%d: line longer than %d characters",
                            path, lineno, MAX_LINE);
            break;
        }
        chomp(line);
        if (blank_or_comment(line))
            continue;
        if (!have_header) {
            char *field[MAX_COLUMNS + 1];
            int n = split_csv(line, field, MAX_COLUMNS + 1);
            if (n < 1 || n > MAX_COLUMNS) {
                rc = sl_err_set(e, SL_ECONFIG, __func__, __LINE__,
                                "%s:%d: the header needs 1 to %d columns named section.key", path,
                                lineno, MAX_COLUMNS);
                break;
            }
            for (int c = 0; c < n && rc == SL_OK; c++) {
                const char *name = strcmp(field[c], "name") == 0 ? "scenario.name" : field[c];
                int id = sl_scenario_find(name);
                if (id < 0) {
                    rc = sl_err_set(e, SL_ECONFIG, __func__, __LINE__,
                                    "%s:%d: column %d '%s' is not a scenario key (columns are "
                                    "section.key as 'steamloft params' lists them, or name)",
                                    path, lineno, c + 1, field[c]);
                    break;
                }
                for (int k = 0; k < c; k++)
                    if (t->col_id[k] == id)
                        rc = sl_err_set(e, SL_ECONFIG, __func__, __LINE__,
                                        "%s:%d: column '%s' is given twice (columns %d and %d)", path,
                                        lineno, field[c], k + 1, c + 1);
                t->col_id[c] = id;
            }
            t->ncol = n;
            have_header = 1;
            continue;
        }
        sl_batch_item j;
        memset(&j, 0, sizeof j);
        j.table = t;
        j.line = lineno;
        j.row_no = ++rows;
        j.row = strdup(line);
        if (j.row == NULL)
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory");
        else if ((rc = add_job(l, j, e)) != SL_OK)
            free(j.row);
    }
    if (rc == SL_OK && ferror(f))
        rc = sl_err_set(e, SL_EIO, __func__, __LINE__, "%s: read error", path);
    if (rc == SL_OK && !have_header)
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                        "%s: empty table: want a header of section.key columns and one row per scenario",
                        path);
    free(line);
    fclose(f);
    return rc;
}

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Every *.ini of a folder, by name.  The names are kept in NAMES (freed by the caller). */
static int add_folder(sl_batch *l, const char *dir, char ***names, size_t *nnames, sl_err *e)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open the folder: %s", dir, strerror(errno));
    size_t first = *nnames;
    struct dirent *de;
    int rc = SL_OK;
    while (rc == SL_OK && (de = readdir(d)) != NULL) {
        if (de->d_name[0] == '.' || !ends_with(de->d_name, ".ini"))
            continue;
        size_t len = strlen(dir) + strlen(de->d_name) + 2;
        char *p = malloc(len);
        char **np = realloc(*names, (*nnames + 1) * sizeof *np);
        if (p == NULL || np == NULL) {
            free(p);
            if (np)
                *names = np;
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory");
            break;
        }
        *names = np;
        snprintf(p, len, "%s%s%s", dir, ends_with(dir, "/") ? "" : "/", de->d_name);
        (*names)[(*nnames)++] = p;
    }
    closedir(d);
    SL_TRY_RETURN(e, rc);
    if (*nnames == first)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: no *.ini scenario files in the folder", dir);
    qsort(*names + first, *nnames - first, sizeof **names, cmp_str);
    for (size_t i = first; i < *nnames; i++) {
        sl_batch_item j;
        memset(&j, 0, sizeof j);
        j.path = (*names)[i];
        SL_TRY_RETURN(e, add_job(l, j, e));
    }
    return SL_OK;
}

/* Build the scenario of job J (file or row), with the --set overrides. */
static int apply_sets(const char *const *sets, size_t n_sets, sl_scenario *sc, sl_err *e)
{
    for (size_t i = 0; i < n_sets; i++)
        SL_TRY_RETURN(e, sl_scenario_override(sc, sets[i], e));
    return SL_OK;
}

static int load_job(const sl_batch_item *j, const sl_scenario *base, const char *const *sets, size_t n_sets,
                    sl_scenario *sc, sl_err *e)
{
    if (j->path) {
        SL_TRY_RETURN(e, sl_scenario_read(sc, j->path, e));
        SL_TRY_RETURN(e, apply_sets(sets, n_sets, sc, e));
        return sl_scenario_finish(sc, e);
    }
    const sl_batch_table *t = j->table;
    if (base)
        *sc = *base;
    else
        SL_TRY_RETURN(e, sl_scenario_read_string(sc, t->path, "", e));
    snprintf(sc->path, sizeof sc->path, "%.240s:%d", t->path, j->line);
    char *copy = strdup(j->row);
    if (copy == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    char *field[MAX_COLUMNS + 1];
    int n = split_csv(copy, field, MAX_COLUMNS + 1);
    int rc = SL_OK;
    if (n < 0)
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: a quoted field is not closed", sc->path);
    else if (n != t->ncol)
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: %d fields, but the header has %d columns",
                        sc->path, n, t->ncol);
    int named = 0;
    char assign[SL_SCENARIO_RAW_LEN + 80];
    for (int c = 0; rc == SL_OK && c < n; c++) {
        if (field[c][0] == '\0')
            continue; /* empty cell: the base's value */
        const sl_param_def *d = &sl_scenario_params[t->col_id[c]];
        if (strlen(field[c]) >= SL_SCENARIO_RAW_LEN) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: column %s.%s: value longer than %d characters",
                            sc->path, d->section, d->key, SL_SCENARIO_RAW_LEN - 1);
            break;
        }
        snprintf(assign, sizeof assign, "%s.%s=%s", d->section, d->key, field[c]);
        rc = sl_scenario_override_column(sc, assign, e);
        named |= t->col_id[c] == SL_P_SCENARIO_NAME;
    }
    free(copy);
    SL_TRY_RETURN(e, rc);
    if (!named) { /* the table's name and the row number */
        snprintf(assign, sizeof assign, "scenario.name=%.80s-%d", t->stem, j->row_no);
        SL_TRY_RETURN(e, sl_scenario_override_column(sc, assign, e));
    }
    SL_TRY_RETURN(e, apply_sets(sets, n_sets, sc, e));
    return sl_scenario_finish(sc, e);
}

/* Run job J on CH (the thread's chain); fill its results. */
static void run_job(sl_batch_item *j, const sl_scenario *base, const char *const *sets, size_t n_sets,
                    sl_chain *ch, sl_scenario *sc)
{
    sl_err e;
    sl_err_clear(&e);
    memset(sc, 0, sizeof *sc);
    int rc = load_job(j, base, sets, n_sets, sc, &e);
    if (j->path)
        snprintf(j->source, sizeof j->source, "%s", j->path);
    else
        snprintf(j->source, sizeof j->source, "%s:%d", j->table->path, j->line);
    if (j->path == NULL && !sc->set_key[SL_P_SCENARIO_NAME]) /* a row that did not get that far */
        snprintf(j->name, sizeof j->name, "%.80s-%d", j->table->stem, j->row_no);
    else if (sc->path[0])
        sl_scenario_name(sc, j->name, sizeof j->name);
    else
        sl_scenario_path_stem(j->source, j->name, sizeof j->name);
    j->kind = sc->kind == SL_SCENARIO_IMPACTOR ? "impactor" : sc->kind == SL_SCENARIO_EXPLOSION ? "explosion" : "";
    if (rc == SL_OK)
        rc = sl_chain_run(sc, ch, &e);
    if (rc == SL_OK)
        sl_output_key_results(ch, &j->k);
    j->status = rc;
    if (rc != SL_OK)
        snprintf(j->reason, sizeof j->reason, "%s", e.msg[0] ? e.msg : sl_err_name(rc));
}

/* ------------------------------------------------------------------ output */

/* A CSV cell at full precision, as `run --json` writes them (empty for NaN). */
static void num(FILE *f, double x)
{
    if (isfinite(x))
        fprintf(f, "%.10g", x);
}

static void csv_str(FILE *f, const char *s)
{
    if (strpbrk(s, ",\"\n") == NULL) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (const char *p = s; *p; p++) {
        if (*p == '"')
            fputc('"', f);
        fputc(*p == '\n' ? ' ' : *p, f);
    }
    fputc('"', f);
}

/* The columns of --csv and the members of --json: run --json's keys. */
#define TAB_NUMBERS(X)                                        \
    X("energy_J", k.energy_J)                                 \
    X("energy_at_sea_J", k.energy_at_sea_J)                   \
    X("strat_injected_kg", k.strat_injected_kg)               \
    X("stratospheric_water_kg", k.strat_water_kg)             \
    X("stratospheric_vapor_kg", k.strat_vapor_kg)             \
    X("stratospheric_ice_kg", k.strat_ice_kg)                 \
    X("background_burden_kg", k.background_burden_kg)         \
    X("percent_of_background", k.percent_of_background)       \
    X("efolding_years", k.efolding_years)

static void print_csv(FILE *f, const sl_batch *l)
{
    fprintf(f, "# steamloft tabulate: one row per scenario; SI values with the unit in the column name\n"
               "# %s\n",
            sl_cli_caution());
    fputs("name,source,status,exit,kind,regime", f);
#define X_HEAD(key, field) fputs("," key, f);
    TAB_NUMBERS(X_HEAD)
#undef X_HEAD
    fputs(",validity,reason\n", f);
    for (size_t i = 0; i < l->n; i++) {
        const sl_batch_item *j = &l->item[i];
        int ok = j->status == SL_OK;
        csv_str(f, j->name);
        fputc(',', f);
        csv_str(f, j->source);
        fprintf(f, ",%s,%d,%s,%s", ok ? "ok" : "failed", ok ? 0 : sl_err_exit_code(j->status), j->kind,
                ok ? j->k.regime : "");
#define X_ROW(key, field)            \
    fputc(',', f);                   \
    if (ok)                          \
        num(f, j->field);
        TAB_NUMBERS(X_ROW)
#undef X_ROW
        fputc(',', f);
        csv_str(f, ok ? j->k.validity : "");
        fputc(',', f);
        csv_str(f, ok ? "" : j->reason);
        fputc('\n', f);
    }
}

static int print_json(FILE *f, const sl_batch *l, sl_err *e)
{
    sl_json js;
    sl_json_begin(&js, f);
    sl_json_string(&js, "steamloft", sl_cli_version());
    sl_json_string(&js, "command", "tabulate");
    sl_json_begin_array(&js, "scenarios", SL_JSON_LINES);
    for (size_t i = 0; i < l->n; i++) {
        const sl_batch_item *j = &l->item[i];
        int ok = j->status == SL_OK;
        sl_json_begin_object(&js, NULL, SL_JSON_INLINE);
        sl_json_string(&js, "name", j->name);
        sl_json_string(&js, "source", j->source);
        sl_json_string(&js, "status", ok ? "ok" : "failed");
        sl_json_integer(&js, "exit", ok ? 0 : sl_err_exit_code(j->status));
        sl_json_string(&js, "kind", j->kind);
        if (ok) {
            sl_json_string(&js, "regime", j->k.regime);
#define X_JSON(key, field) sl_json_number(&js, key, j->field);
            TAB_NUMBERS(X_JSON)
#undef X_JSON
            sl_json_bool(&js, "efolding_extrapolated", j->k.efolding_extrapolated);
            sl_json_string(&js, "validity", j->k.validity);
        } else {
            sl_json_string(&js, "reason", j->reason);
        }
        sl_json_end_object(&js);
    }
    sl_json_end_array(&js);
    sl_json_integer(&js, "failed", (long long)l->failed);
    sl_json_string(&js, "caution", sl_cli_caution());
    return sl_json_end(&js, e);
}

static void print_text(FILE *f, const sl_batch *l)
{
    int w = 4;
    for (size_t i = 0; i < l->n; i++) {
        int n = (int)strlen(l->item[i].name);
        if (n > w)
            w = n;
    }
    if (w > 40)
        w = 40;
    fprintf(f, "steamloft tabulate: %zu scenario%s", l->n, l->n == 1 ? "" : "s");
    if (l->failed)
        fprintf(f, ", %zu failed (their rows say why)", l->failed);
    fprintf(f, "\n\n");
    fprintf(f, "%-*s  %-9s  %-8s %9s %9s %11s %9s %9s\n", w, "", "", "", "energy", "at sea",
            "above trop", "of bkgd", "e-fold");
    fprintf(f, "%-*s  %-9s  %-8s %9s %9s %11s %9s %9s  %s\n", w, "name", "event", "regime", "Mt TNT",
            "Mt TNT", "Tg water", "%", "years", "validity (full text: --csv, --json)");
    for (size_t i = 0; i < l->n; i++) {
        const sl_batch_item *j = &l->item[i];
        if (j->status != SL_OK) {
            fprintf(f, "%-*.*s  %-9s  %-8s %s\n", w, w, j->name, j->kind[0] ? j->kind : "-", "FAILED",
                    j->reason);
            continue;
        }
        char a[32], b[32], c[32], d[32], g[32];
        sl_output_fmt3(a, sizeof a, j->k.energy_J / SL_J_PER_MT_TNT);
        sl_output_fmt3(b, sizeof b, j->k.energy_at_sea_J / SL_J_PER_MT_TNT);
        sl_output_fmt3(c, sizeof c, j->k.strat_injected_kg * 1e-9);
        sl_output_fmt3(d, sizeof d, j->k.percent_of_background);
        sl_output_fmt3(g, sizeof g, j->k.efolding_years);
        fprintf(f, "%-*.*s  %-9s  %-8s %9s %9s %11s %9s %9s  %s\n", w, w, j->name, j->kind, j->k.regime, a, b,
                c, d, g, j->k.validity_short);
    }
    fprintf(f, "\n%s\n", sl_cli_caution());
}

/* ------------------------------------------------------------------ API */

int sl_batch_set_base(sl_batch *b, const char *path, sl_err *e)
{
    if (b->base == NULL && (b->base = calloc(1, sizeof *b->base)) == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    return sl_scenario_read(b->base, path, e);
}

int sl_batch_add(sl_batch *b, const char *in, sl_err *e)
{
    struct stat st;
    if (strcmp(in, "-") == 0) {
        if (b->stdin_used++)
            SL_FAIL_RETURN(e, SL_EUSAGE, "'-' (standard input) given twice");
        return add_job(b, (sl_batch_item){.path = in}, e);
    }
    if (stat(in, &st) == 0 && S_ISDIR(st.st_mode))
        return add_folder(b, in, &b->names, &b->nnames, e);
    if (ends_with(in, ".csv"))
        return add_table(b, in, e);
    return add_job(b, (sl_batch_item){.path = in}, e); /* a missing file fails in its row */
}

int sl_batch_check(const sl_batch *b, sl_err *e)
{
    if (b->base && b->ntables == 0)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--base applies to CSV table rows: give a FILE.csv");
    if (b->n == 0)
        SL_FAIL_RETURN(e, SL_EDATA, "the tables hold no scenario rows");
    return SL_OK;
}

void sl_batch_run(sl_batch *b, const char *const *sets, size_t n_sets, int threads)
{
    int nt = 1;
#ifdef _OPENMP
    nt = threads > 0 ? threads : omp_get_max_threads();
#else
    (void)threads;
#endif
    if ((size_t)nt > b->n)
        nt = (int)b->n;
    if (nt < 1)
        nt = 1;
    sl_batch_item *jobs = b->item;
    long njobs = (long)b->n;
    const sl_scenario *base = b->base;
#ifdef _OPENMP
#pragma omp parallel num_threads(nt) default(none) shared(jobs, njobs, base, sets, n_sets)
#endif
    {
        sl_chain *ch = calloc(1, sizeof *ch);
        sl_scenario *sc = calloc(1, sizeof *sc);
#ifdef _OPENMP
#pragma omp for schedule(dynamic, 1)
#endif
        for (long i = 0; i < njobs; i++) {
            if (ch && sc)
                run_job(&jobs[i], base, sets, n_sets, ch, sc);
            else {
                jobs[i].status = SL_ENOMEM;
                snprintf(jobs[i].reason, sizeof jobs[i].reason, "out of memory");
            }
        }
        if (ch)
            sl_chain_free(ch);
        free(ch);
        free(sc);
    }
    b->failed = 0;
    for (size_t i = 0; i < b->n; i++)
        b->failed += b->item[i].status != SL_OK;
}

int sl_batch_write(const sl_batch *b, FILE *out, sl_batch_format format, sl_err *e)
{
    if (format == SL_BATCH_JSON)
        return print_json(out, b, e);
    if (format == SL_BATCH_CSV)
        print_csv(out, b);
    else
        print_text(out, b);
    if (fflush(out) != 0 || ferror(out))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the table");
    return SL_OK;
}

void sl_batch_free(sl_batch *b)
{
    if (b == NULL)
        return;
    for (size_t i = 0; i < b->n; i++)
        free(b->item[i].row);
    free(b->item);
    for (size_t t = 0; t < b->ntables; t++)
        free(b->table[t]);
    free(b->table);
    for (size_t i = 0; i < b->nnames; i++)
        free(b->names[i]);
    free(b->names);
    free(b->base);
    memset(b, 0, sizeof *b);
}
