/* `steamloft tabulate`: many scenarios, one row each.
 *
 * Inputs are scenario files, folders (every *.ini in them, by name) and CSV
 * tables with one scenario per row: the header names the keys as
 * section.key (as `steamloft params` lists them; `name` is short for
 * scenario.name), each cell is a value in the key's own unit as in a scenario
 * file, an empty cell leaves the key to the base.  The base of every row is
 * --base FILE (a scenario file) or, without it, nothing but the table
 * defaults, so the row must then give the required keys.  --set overrides
 * apply to every scenario, after the file or row.
 *
 * Each scenario runs through the whole chain (chain.h), in parallel with
 * OpenMP: one chain per thread, reused across its scenarios as an ensemble
 * does; the rows are printed in input order whatever the thread count, so
 * the output is the same for any number of threads.  The numbers are those
 * `run --json` reports for the same scenario (the same sl_output_key_results).
 * A scenario that fails keeps its row: status "failed", the reason and the
 * exit code `run` would give.
 *
 * Exit status: 0 when every scenario ran; 65 when at least one failed (the
 * rows say why); 64 usage; 66 an input folder or table cannot be read;
 * 78 a table header names an unknown key. */
#include "steamloft/chain.h"
#include "steamloft/cli.h"
#include "steamloft/cmd.h"
#include "steamloft/output_text.h"
#include "steamloft/scenario.h"
#include "steamloft/units.h"

#include <dirent.h>
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sysexits.h>
#ifdef _OPENMP
#include <omp.h>
#endif

enum { MAX_SCENARIOS = 100000, MAX_COLUMNS = SL_P_COUNT, MAX_LINE = 8192 };

/* A CSV table: its path and the scenario key of each column. */
typedef struct tab_table {
    char path[SL_SCENARIO_PATH_LEN];
    char stem[96];            /* file name without folders and extension */
    int ncol;
    int col_id[MAX_COLUMNS];  /* scenario key of each column */
} tab_table;

/* One scenario to run: a file, or a row of a table. */
typedef struct tab_job {
    const char *path;         /* scenario file (not owned), or NULL for a row */
    const tab_table *table;   /* the row's table */
    char *row;                /* the row's text (owned) */
    int line, row_no;         /* line in the table, row number (1 = first data row) */
    /* Results. */
    int status;               /* SL_OK or the failure */
    char name[128];
    char source[SL_SCENARIO_PATH_LEN + 16];
    const char *kind;
    char reason[SL_ERR_MSG_LEN];
    sl_key_results k;
} tab_job;

typedef struct tab_list {
    tab_job *job;
    size_t n, cap;
    tab_table **table;
    size_t ntables;
} tab_list;

static int add_job(tab_list *l, tab_job j, sl_err *e)
{
    if (l->n >= MAX_SCENARIOS)
        SL_FAIL_RETURN(e, SL_EUSAGE, "more than %d scenarios: split the table", MAX_SCENARIOS);
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        tab_job *p = realloc(l->job, cap * sizeof *p);
        if (p == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        l->job = p;
        l->cap = cap;
    }
    l->job[l->n++] = j;
    return SL_OK;
}

/* Release the list, the folder file names and the base; return CODE. */
static int cleanup(tab_list *l, char **names, size_t nnames, sl_scenario *base, int code);

static void list_free(tab_list *l)
{
    for (size_t i = 0; i < l->n; i++)
        free(l->job[i].row);
    free(l->job);
    for (size_t t = 0; t < l->ntables; t++)
        free(l->table[t]);
    free(l->table);
    memset(l, 0, sizeof *l);
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
static int add_table(tab_list *l, const char *path, sl_err *e)
{
    FILE *f = fopen(path, "r");
    if (f == NULL)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open the table: %s", path, strerror(errno));
    tab_table *t = calloc(1, sizeof *t);
    char *line = malloc(MAX_LINE + 2);
    tab_table **tp = realloc(l->table, (l->ntables + 1) * sizeof *tp);
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
        tab_job j;
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
static int add_folder(tab_list *l, const char *dir, char ***names, size_t *nnames, sl_err *e)
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
        tab_job j;
        memset(&j, 0, sizeof j);
        j.path = (*names)[i];
        SL_TRY_RETURN(e, add_job(l, j, e));
    }
    return SL_OK;
}

/* Build the scenario of job J (file or row), with the --set overrides. */
static int load_job(const tab_job *j, const sl_scenario *base, const sl_cli_sets *sets,
                    sl_scenario *sc, sl_err *e)
{
    if (j->path)
        return sl_cli_scenario_load(j->path, sets, sc, e);
    const tab_table *t = j->table;
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
    SL_TRY_RETURN(e, sl_cli_sets_apply(sets, sc, e));
    return sl_scenario_finish(sc, e);
}

/* Run job J on CH (the thread's chain); fill its results. */
static void run_job(tab_job *j, const sl_scenario *base, const sl_cli_sets *sets, sl_chain *ch,
                    sl_scenario *sc)
{
    sl_err e;
    sl_err_clear(&e);
    memset(sc, 0, sizeof *sc);
    int rc = load_job(j, base, sets, sc, &e);
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

static void json_str(FILE *f, const char *s)
{
    fputc('"', f);
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        if (*p == '"' || *p == '\\')
            fprintf(f, "\\%c", *p);
        else if (*p < 0x20)
            fprintf(f, "\\u%04x", *p);
        else
            fputc(*p, f);
    }
    fputc('"', f);
}

/* Full precision, as `run --json` writes them. */
static void num(FILE *f, double x, int json)
{
    if (isfinite(x))
        fprintf(f, "%.10g", x);
    else if (json)
        fputs("null", f);
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

static void print_csv(FILE *f, const tab_list *l)
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
        const tab_job *j = &l->job[i];
        int ok = j->status == SL_OK;
        csv_str(f, j->name);
        fputc(',', f);
        csv_str(f, j->source);
        fprintf(f, ",%s,%d,%s,%s", ok ? "ok" : "failed", ok ? 0 : sl_err_exit_code(j->status), j->kind,
                ok ? j->k.regime : "");
#define X_ROW(key, field)            \
    fputc(',', f);                   \
    if (ok)                          \
        num(f, j->field, 0);
        TAB_NUMBERS(X_ROW)
#undef X_ROW
        fputc(',', f);
        csv_str(f, ok ? j->k.validity : "");
        fputc(',', f);
        csv_str(f, ok ? "" : j->reason);
        fputc('\n', f);
    }
}

static void print_json(FILE *f, const tab_list *l, size_t failed)
{
    fprintf(f, "{\n  \"steamloft\": ");
    json_str(f, sl_cli_version());
    fprintf(f, ",\n  \"command\": \"tabulate\",\n  \"scenarios\": [");
    for (size_t i = 0; i < l->n; i++) {
        const tab_job *j = &l->job[i];
        int ok = j->status == SL_OK;
        fprintf(f, "%s\n    {\"name\": ", i ? "," : "");
        json_str(f, j->name);
        fputs(", \"source\": ", f);
        json_str(f, j->source);
        fprintf(f, ", \"status\": \"%s\", \"exit\": %d, \"kind\": ", ok ? "ok" : "failed",
                ok ? 0 : sl_err_exit_code(j->status));
        json_str(f, j->kind);
        if (ok) {
            fputs(", \"regime\": ", f);
            json_str(f, j->k.regime);
#define X_JSON(key, field)              \
    fputs(", \"" key "\": ", f);        \
    num(f, j->field, 1);
            TAB_NUMBERS(X_JSON)
#undef X_JSON
            fprintf(f, ", \"efolding_extrapolated\": %s, \"validity\": ",
                    j->k.efolding_extrapolated ? "true" : "false");
            json_str(f, j->k.validity);
        } else {
            fputs(", \"reason\": ", f);
            json_str(f, j->reason);
        }
        fputc('}', f);
    }
    fprintf(f, "\n  ],\n  \"failed\": %zu,\n  \"caution\": ", failed);
    json_str(f, sl_cli_caution());
    fputs("\n}\n", f);
}

static void print_text(FILE *f, const tab_list *l, size_t failed)
{
    int w = 4;
    for (size_t i = 0; i < l->n; i++) {
        int n = (int)strlen(l->job[i].name);
        if (n > w)
            w = n;
    }
    if (w > 40)
        w = 40;
    fprintf(f, "steamloft tabulate: %zu scenario%s", l->n, l->n == 1 ? "" : "s");
    if (failed)
        fprintf(f, ", %zu failed (their rows say why)", failed);
    fprintf(f, "\n\n");
    fprintf(f, "%-*s  %-9s  %-8s %9s %9s %11s %9s %9s\n", w, "", "", "", "energy", "at sea",
            "above trop", "of bkgd", "e-fold");
    fprintf(f, "%-*s  %-9s  %-8s %9s %9s %11s %9s %9s  %s\n", w, "name", "event", "regime", "Mt TNT",
            "Mt TNT", "Tg water", "%", "years", "validity (full text: --csv, --json)");
    for (size_t i = 0; i < l->n; i++) {
        const tab_job *j = &l->job[i];
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

/* ------------------------------------------------------------------ command */

static void usage(void)
{
    printf("Usage: steamloft tabulate [--csv | --json] [--base FILE] [--set SECTION.KEY=VALUE]...\n"
           "                          [-j N] INPUT...\n"
           "Run many scenarios through the whole chain and print one row per scenario: name,\n"
           "event, regime, energy, energy reaching the sea, water above the tropopause, peak\n"
           "share of the background stratospheric water, e-folding time and validity.\n"
           "INPUT is a scenario file, a folder (every *.ini in it, by name) or a CSV table\n"
           "(FILE.csv) with one scenario per row: its header names the keys as section.key\n"
           "(as 'steamloft params' lists them; 'name' stands for scenario.name), each cell is\n"
           "a value in the key's own unit, an empty cell keeps the base's value.  Lines that\n"
           "start with '#' are comments.  A row without a name is called TABLE-ROW.\n"
           "      --base FILE     the scenario each table row starts from (default: only the\n"
           "                      defaults, so the rows give the required keys)\n" SL_CLI_SET_HELP
           "                           (every scenario, after its file or row)\n"
           "      --csv           CSV (SI values, the keys of 'run --json', full precision)\n"
           "      --json          JSON (the same members)\n"
           "  -j, --threads N     OpenMP threads (default: OMP_NUM_THREADS or all cores); the\n"
           "                      output is the same for any number\n"
           "  -h, --help          print this help\n"
           "A scenario that fails keeps its row with the reason (and, in CSV and JSON, the exit\n"
           "code 'run' would give).  Exit status: 0 every scenario ran, 65 one or more failed,\n"
           "64 usage, 66 an input folder or table cannot be read, 78 a table header names an\n"
           "unknown key.\n\n%s\n",
           sl_cli_caution());
}

int sl_cmd_tabulate(int argc, char **argv, const sl_cli_globals *g)
{
    enum { OPT_CSV = 0x5400, OPT_JSON, OPT_BASE };
    static const struct option opts[] = {{"csv", no_argument, NULL, OPT_CSV},
                                         {"json", no_argument, NULL, OPT_JSON},
                                         {"base", required_argument, NULL, OPT_BASE},
                                         {"threads", required_argument, NULL, 'j'},
                                         {"help", no_argument, NULL, 'h'},
                                         SL_CLI_SET_OPTION,
                                         {NULL, 0, NULL, 0}};
    int csv = 0, json = 0, threads = 0, c;
    const char *base_path = NULL;
    sl_cli_sets sets = {0};
    sl_err e;
    sl_err_clear(&e);
    while ((c = getopt_long(argc, argv, ":hj:", opts, NULL)) != -1) {
        switch (c) {
        case 'h': usage(); return EX_OK;
        case OPT_CSV: csv = 1; break;
        case OPT_JSON: json = 1; break;
        case OPT_BASE: base_path = optarg; break;
        case 'j': {
            char *end = NULL;
            long v = strtol(optarg, &end, 10);
            if (end == optarg || *end != '\0' || v < 1 || v > 4096)
                return sl_cli_usage_error(g, "tabulate", "--threads '%s' is not an integer from 1 to 4096",
                                          optarg);
            threads = (int)v;
            break;
        }
        case SL_CLI_OPT_SET:
            if (sl_cli_sets_add(&sets, optarg, &e) != SL_OK)
                return sl_cli_usage_error(g, "tabulate", "%s", e.msg);
            break;
        default: return sl_cli_option_error(g, "tabulate", c, argv);
        }
    }
    if (csv && json)
        return sl_cli_usage_error(g, "tabulate", "give --csv or --json, not both");
    if (optind >= argc)
        return sl_cli_usage_error(g, "tabulate", "give scenario files, folders or a CSV table");

    /* The base of table rows: read (syntax) now, finished per row. */
    sl_scenario *base = NULL;
    if (base_path) {
        base = calloc(1, sizeof *base);
        if (base == NULL) {
            sl_err_set(&e, SL_ENOMEM, __func__, __LINE__, "out of memory");
            return sl_cli_report(g, "tabulate", &e);
        }
        if (sl_scenario_read(base, base_path, &e) != SL_OK) {
            free(base);
            return sl_cli_report(g, "tabulate", &e);
        }
    }

    tab_list l = {0};
    char **names = NULL;
    size_t nnames = 0;
    int rc = SL_OK, stdin_used = 0, tables = 0;
    for (int a = optind; rc == SL_OK && a < argc; a++) {
        const char *in = argv[a];
        struct stat st;
        if (strcmp(in, "-") == 0) {
            if (stdin_used++)
                rc = sl_err_set(&e, SL_EUSAGE, __func__, __LINE__, "'-' (standard input) given twice");
            else
                rc = add_job(&l, (tab_job){.path = in}, &e);
        } else if (stat(in, &st) == 0 && S_ISDIR(st.st_mode)) {
            rc = add_folder(&l, in, &names, &nnames, &e);
        } else if (ends_with(in, ".csv")) {
            rc = add_table(&l, in, &e);
            tables++;
        } else {
            rc = add_job(&l, (tab_job){.path = in}, &e); /* a missing file fails in its row */
        }
    }
    if (rc == SL_OK && base && tables == 0)
        rc = sl_err_set(&e, SL_EUSAGE, __func__, __LINE__, "--base applies to CSV table rows: give a FILE.csv");
    if (rc == SL_OK && l.n == 0)
        rc = sl_err_set(&e, SL_EDATA, __func__, __LINE__, "the tables hold no scenario rows");
    if (rc != SL_OK) {
        int code = rc == SL_EUSAGE ? sl_cli_usage_error(g, "tabulate", "%s", e.msg) : sl_cli_report(g, "tabulate", &e);
        return cleanup(&l, names, nnames, base, code);
    }

    /* Run: one chain per thread, rows in input order. */
    int nt = 1;
#ifdef _OPENMP
    nt = threads > 0 ? threads : omp_get_max_threads();
#endif
    if ((size_t)nt > l.n)
        nt = (int)l.n;
    if (nt < 1)
        nt = 1;
    tab_job *jobs = l.job;
    long njobs = (long)l.n;
    const sl_scenario *basec = base;
    const sl_cli_sets *setsc = &sets;
#ifdef _OPENMP
#pragma omp parallel num_threads(nt) default(none) shared(jobs, njobs, basec, setsc)
#endif
    {
        sl_chain *ch = calloc(1, sizeof *ch);
        sl_scenario *sc = calloc(1, sizeof *sc);
#ifdef _OPENMP
#pragma omp for schedule(dynamic, 1)
#endif
        for (long i = 0; i < njobs; i++) {
            if (ch && sc)
                run_job(&jobs[i], basec, setsc, ch, sc);
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

    size_t failed = 0;
    for (size_t i = 0; i < l.n; i++)
        failed += l.job[i].status != SL_OK;
    if (csv)
        print_csv(stdout, &l);
    else if (json)
        print_json(stdout, &l, failed);
    else
        print_text(stdout, &l, failed);
    int code = EX_OK;
    if (fflush(stdout) != 0 || ferror(stdout)) {
        sl_err_set(&e, SL_EIO, __func__, __LINE__, "cannot write the table");
        code = sl_cli_report(g, "tabulate", &e);
    } else if (failed) {
        if (g->verbosity >= 0)
            fprintf(stderr, "%s tabulate: %zu of %zu scenarios failed (see their rows)\n", g->prog, failed, l.n);
        code = EX_DATAERR;
    }
    return cleanup(&l, names, nnames, base, code);
}

static int cleanup(tab_list *l, char **names, size_t nnames, sl_scenario *base, int code)
{
    list_free(l);
    for (size_t i = 0; i < nnames; i++)
        free(names[i]);
    free(names);
    free(base);
    return code;
}
