/* scenario: reading and checking scenario files.
 *
 * A scenario file is INI text ([section], key = value) read with inih
 * (ini_parse_stream over a buffer holding the whole file, so "-" can be
 * standard input and every message can quote the offending line).  Every key
 * is a row of SL_SCENARIO_PARAMS (include/steamloft/scenario.h), which gives
 * its type, unit, default, closed valid range and meaning; the unit suffix is
 * converted to SI with the units table (src/units.c) here and nowhere else.
 *
 * inih gives the handler no line number in Debian's build (INI_HANDLER_LINENO
 * is 0 and must not be redefined: it changes the ABI), so the reader that
 * feeds inih counts the lines itself: inih reads one line, then calls the
 * handler for it, so the count at handler time is the key's line.
 *
 * Two phases (see scenario.h): read (syntax, exit 78) then finish (values,
 * exit 65; missing required keys, exit 78).  Derived defaults: the breakup
 * strength follows the density-strength relation of Collins, Melosh & Marcus
 * 2005 (MAPS 40, 817, eq. 9), Y = 10^(2.107 + 0.0624 sqrt(rho)) Pa with rho in
 * kg m-3, fitted by them to bolide breakup data. */
#include "steamloft/scenario.h"

#include "steamloft/date.h"
#include "steamloft/dist.h"
#include "steamloft/infile.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"
#include "steamloft/site.h"

#include <ctype.h>
#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

const sl_param_def sl_scenario_params[SL_P_COUNT] = {
#define SL_X_ROW_(id, sec, key, type, unit, def, lo, hi, flags, choices, meaning) \
    {sec, key, type, unit, def, lo, hi, flags, choices, meaning},
    SL_SCENARIO_PARAMS(SL_X_ROW_)
#undef SL_X_ROW_
};

const char *const sl_scenario_section_names[SL_S_COUNT] = {
#define SL_X_SNAME_(id, name, meaning) name,
    SL_SCENARIO_SECTIONS(SL_X_SNAME_)
#undef SL_X_SNAME_
};

const char *const sl_scenario_section_meanings[SL_S_COUNT] = {
#define SL_X_SMEAN_(id, name, meaning) meaning,
    SL_SCENARIO_SECTIONS(SL_X_SMEAN_)
#undef SL_X_SMEAN_
};

/* Longest line inih handles in Debian's build is INI_MAX_LINE (200) minus
 * "\r\n\0"; a longer line would be split silently, so we refuse it first.
 * Comments and line ends are taken out before inih sees the text (see
 * strip_comments), so only the content of a line counts. */
enum { MAX_LINE_CHARS = 196, MAX_FILE_BYTES = 1 << 20 };


/* ------------------------------------------------------------------ table */

static int section_index(const char *name)
{
    for (int s = 0; s < SL_S_COUNT; s++)
        if (strcmp(sl_scenario_section_names[s], name) == 0)
            return s;
    return -1;
}

static int param_index(const char *section, const char *key)
{
    for (int i = 0; i < SL_P_COUNT; i++)
        if (strcmp(sl_scenario_params[i].section, section) == 0 &&
            strcmp(sl_scenario_params[i].key, key) == 0)
            return i;
    return -1;
}

static const sl_unit *unit_of(int id)
{
    const char *u = sl_scenario_params[id].unit;
    return (u && u[0]) ? sl_units_lookup(u) : NULL;
}

static double to_si_factor(int id)
{
    const sl_unit *u = unit_of(id);
    return u ? u->to_si : 1.0;
}

const char *sl_scenario_unit_symbol(sl_param_id id)
{
    const sl_unit *u = unit_of((int)id);
    return u ? u->symbol : "";
}

const char *sl_scenario_si_unit(sl_param_id id)
{
    const sl_unit *u = unit_of((int)id);
    if (u)
        return u->si_symbol;
    return sl_scenario_params[id].type == SL_PT_INT ? "1" : "";
}

static int is_numeric(int id)
{
    sl_param_type t = sl_scenario_params[id].type;
    return t == SL_PT_REAL || t == SL_PT_INT;
}

void sl_scenario_range_text(sl_param_id id, char *buf, size_t n)
{
    const sl_param_def *d = &sl_scenario_params[id];
    if (d->type == SL_PT_CHOICE)
        snprintf(buf, n, "one of %s", d->choices);
    else if (d->type == SL_PT_TEXT && (d->flags & SL_PF_DATE))
        snprintf(buf, n, "%s", SL_DATE_FORMS);
    else if (d->type == SL_PT_TEXT && (d->flags & SL_PF_OPTIONAL))
        snprintf(buf, n, "free text");
    else if (d->type == SL_PT_TEXT)
        snprintf(buf, n, "a profile name or a file path");
    else {
        const char *sym = sl_scenario_unit_symbol(id);
        if (strcmp(sym, "1") == 0)
            sym = ""; /* dimensionless: no unit in the text */
        snprintf(buf, n, "%g to %g%s%s%s", d->min_value, d->max_value, sym[0] ? " " : "", sym,
                 d->type == SL_PT_INT ? ", integer" : "");
    }
}

const char *sl_scenario_origin_name(sl_param_origin o)
{
    switch (o) {
    case SL_ORIGIN_UNSET: return "unset";
    case SL_ORIGIN_DEFAULT: return "default";
    case SL_ORIGIN_DERIVED: return "derived";
    case SL_ORIGIN_FILE: return "file";
    case SL_ORIGIN_SET: return "set";
    case SL_ORIGIN_EXTERNAL: return "external";
    }
    return "unknown";
}

int sl_scenario_find(const char *section_dot_key)
{
    if (section_dot_key == NULL)
        return -1;
    const char *dot = strchr(section_dot_key, '.');
    if (dot == NULL || dot == section_dot_key)
        return -1;
    size_t slen = (size_t)(dot - section_dot_key);
    for (int i = 0; i < SL_P_COUNT; i++) {
        const sl_param_def *d = &sl_scenario_params[i];
        if (strlen(d->section) == slen && strncmp(d->section, section_dot_key, slen) == 0 &&
            strcmp(d->key, dot + 1) == 0)
            return i;
    }
    return -1;
}

/* ------------------------------------------------------------------ phase 1 */

typedef struct parse_ctx {
    sl_scenario *sc;
    const char *text;      /* whole file */
    size_t pos;            /* reader position */
    int line;              /* number of the line last handed to inih */
    int at_line_start;     /* the previous chunk ended a line */
    sl_err *e;
    int failed;            /* the handler recorded an error */
} parse_ctx;

/* fgets-style reader over the buffer that counts lines. */
static char *buffer_reader(char *str, int num, void *stream)
{
    parse_ctx *c = stream;
    if (c->text[c->pos] == '\0' || num < 2)
        return NULL;
    if (c->at_line_start)
        c->line++;
    int k = 0;
    while (k < num - 1 && c->text[c->pos] != '\0') {
        char ch = c->text[c->pos++];
        str[k++] = ch;
        if (ch == '\n')
            break;
    }
    str[k] = '\0';
    c->at_line_start = (k > 0 && str[k - 1] == '\n');
    return str;
}

/* Copy line LINENO (1-based) of TEXT into BUF, trimmed. */
static void quote_line(const char *text, int lineno, char *buf, size_t n)
{
    const char *p = text;
    for (int l = 1; l < lineno && *p; l++) {
        const char *nl = strchr(p, '\n');
        if (!nl) {
            p += strlen(p);
            break;
        }
        p = nl + 1;
    }
    while (*p == ' ' || *p == '\t')
        p++;
    size_t k = 0;
    while (p[k] && p[k] != '\n' && p[k] != '\r' && k + 1 < n && k < 60)
        k++;
    memcpy(buf, p, k);
    buf[k] = '\0';
}

static void list_keys(const char *section, char *buf, size_t n)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int i = 0; i < SL_P_COUNT && used + 1 < n; i++) {
        if (strcmp(sl_scenario_params[i].section, section) != 0)
            continue;
        int w = snprintf(buf + used, n - used, "%s%s", used ? ", " : "", sl_scenario_params[i].key);
        if (w < 0)
            break;
        used += (size_t)w;
    }
}

static void list_sections(char *buf, size_t n)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int s = 0; s < SL_S_COUNT && used + 1 < n; s++) {
        int w = snprintf(buf + used, n - used, "%s[%s]", used ? " " : "", sl_scenario_section_names[s]);
        if (w < 0)
            break;
        used += (size_t)w;
    }
}

static int ini_handler_fn(void *user, const char *section, const char *name, const char *value)
{
    parse_ctx *c = user;
    sl_scenario *sc = c->sc;
    if (c->failed)
        return 0;
    int line = c->line;
    char known[400];
    if (section[0] == '\0') {
        sl_err_set(c->e, SL_ECONFIG, __func__, __LINE__,
                   "%s:%d: key '%s' comes before any [section] header", sc->path, line, name);
        c->failed = 1;
        return 0;
    }
    int s = section_index(section);
    if (s < 0) {
        list_sections(known, sizeof known);
        sl_err_set(c->e, SL_ECONFIG, __func__, __LINE__,
                   "%s:%d: unknown section [%s] (known sections: %s)", sc->path, line, section, known);
        c->failed = 1;
        return 0;
    }
    int id = param_index(section, name);
    if (id < 0) {
        list_keys(section, known, sizeof known);
        sl_err_set(c->e, SL_ECONFIG, __func__, __LINE__,
                   "%s:%d: unknown key '%s' in [%s] (keys of [%s]: %s)", sc->path, line, name,
                   section, section, known);
        c->failed = 1;
        return 0;
    }
    if (sc->line[id] > 0) {
        sl_err_set(c->e, SL_ECONFIG, __func__, __LINE__,
                   "%s:%d: duplicate key [%s] %s (first given on line %d; an indented line "
                   "continues the previous value)",
                   sc->path, line, section, name, sc->line[id]);
        c->failed = 1;
        return 0;
    }
    if (sc->section_line[s] == 0)
        sc->section_line[s] = line;
    sc->line[id] = line;
    snprintf(sc->raw[id], sizeof sc->raw[id], "%s", value);
    return 1;
}

static int scenario_parse_text(sl_scenario *sc, const char *text, sl_err *e);

static void scenario_reset(sl_scenario *sc, const char *name)
{
    memset(sc, 0, sizeof *sc);
    snprintf(sc->path, sizeof sc->path, "%s", name ? name : "<scenario>");
    for (int i = 0; i < SL_P_COUNT; i++)
        sc->value_si[i] = NAN;
}

/* A copy of TEXT without a leading byte-order mark, comments (a line whose
 * first non-blank is ';' or '#', or from a ';' after a blank to the line end,
 * as inih reads them) and CRs before a LF; line numbers are kept.  Returns
 * NULL when out of memory, and the 1-based number of the first line with more
 * than MAX_LINE_CHARS characters of content in *LONG_LINE (0 if none). */
static char *strip_comments(const char *text, int *long_line)
{
    if ((unsigned char)text[0] == 0xEF && (unsigned char)text[1] == 0xBB &&
        (unsigned char)text[2] == 0xBF)
        text += 3;
    size_t n = strlen(text);
    char *out = malloc(n + 1);
    if (out == NULL)
        return NULL;
    *long_line = 0;
    size_t o = 0;
    int lineno = 1;
    const char *p = text;
    while (*p) {
        const char *nl = strchr(p, '\n');
        size_t len = nl ? (size_t)(nl - p) : strlen(p);
        size_t keep;
        /* Inline comments: ';' after a blank (inih's rule); '#' stays in values. */
        size_t first = 0;
        while (first < len && (p[first] == ' ' || p[first] == '\t'))
            first++;
        if (first < len && (p[first] == ';' || p[first] == '#'))
            keep = 0;
        else
            keep = sl_infile_content_len(p, ";", 1);
        if (keep > len)
            keep = len;
        if (keep > MAX_LINE_CHARS && *long_line == 0)
            *long_line = lineno;
        memcpy(out + o, p, keep);
        o += keep;
        if (nl == NULL)
            break;
        out[o++] = '\n';
        p = nl + 1;
        lineno++;
    }
    out[o] = '\0';
    return out;
}

int sl_scenario_read_string(sl_scenario *sc, const char *name, const char *raw_text, sl_err *e)
{
    scenario_reset(sc, name);
    int long_line = 0;
    char *text = strip_comments(raw_text, &long_line);
    if (text == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory while parsing", sc->path);
    /* Refuse lines inih would split. */
    if (long_line) {
        free(text);
        SL_FAIL_RETURN(e, SL_ECONFIG,
                       "%s:%d: line longer than %d characters (comments and line ends not "
                       "counted)",
                       sc->path, long_line, MAX_LINE_CHARS);
    }
    int rc = scenario_parse_text(sc, text, e);
    free(text);
    return rc;
}

static int scenario_parse_text(sl_scenario *sc, const char *text, sl_err *e)
{
    parse_ctx c = {sc, text, 0, 0, 1, e, 0};
    int rc = ini_parse_stream(buffer_reader, &c, ini_handler_fn, &c);
    if (c.failed)
        return e ? e->code : SL_ECONFIG;
    if (rc == -2)
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory while parsing", sc->path);
    if (rc != 0) {
        char q[64];
        quote_line(text, rc, q, sizeof q);
        SL_FAIL_RETURN(e, SL_ECONFIG,
                       "%s:%d: syntax error in '%s': expected '[section]' or 'key = value' "
                       "(comments start with ';' or '#')",
                       sc->path, rc, q);
    }
    return SL_OK;
}

int sl_scenario_read(sl_scenario *sc, const char *path, sl_err *e)
{
    int use_stdin = strcmp(path, "-") == 0;
    const char *shown = use_stdin ? "<stdin>" : path;
    FILE *f = use_stdin ? stdin : fopen(path, "rb");
    if (f == NULL) {
        scenario_reset(sc, shown);
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open scenario file: %s", shown, strerror(errno));
    }
    struct stat st;
    if (!use_stdin && fstat(fileno(f), &st) == 0 && S_ISDIR(st.st_mode)) {
        fclose(f);
        scenario_reset(sc, shown);
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: is a directory, not a scenario file", shown);
    }
    char *buf = malloc(MAX_FILE_BYTES + 1);
    if (buf == NULL) {
        if (!use_stdin)
            fclose(f);
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory", shown);
    }
    size_t n = fread(buf, 1, MAX_FILE_BYTES + 1, f);
    int rerr = ferror(f);
    if (!use_stdin)
        fclose(f);
    if (rerr) {
        free(buf);
        scenario_reset(sc, shown);
        SL_FAIL_RETURN(e, SL_EIO, "%s: read error", shown);
    }
    if (n > MAX_FILE_BYTES) {
        free(buf);
        scenario_reset(sc, shown);
        SL_FAIL_RETURN(e, SL_ECONFIG, "%s: larger than %d bytes: not a scenario file", shown,
                       MAX_FILE_BYTES);
    }
    if (memchr(buf, '\0', n) != NULL) {
        free(buf);
        scenario_reset(sc, shown);
        SL_FAIL_RETURN(e, SL_ECONFIG, "%s: contains NUL bytes: not a text scenario file", shown);
    }
    buf[n] = '\0';
    int rc = sl_scenario_read_string(sc, shown, buf, e);
    free(buf);
    return rc;
}

int sl_scenario_mark_external(sl_scenario *sc, sl_param_id id, sl_err *e)
{
    if ((int)id < 0 || id >= SL_P_COUNT || !is_numeric((int)id))
        SL_FAIL_RETURN(e, SL_EUSAGE, "parameter %d is not a numeric scenario key", (int)id);
    sc->origin[id] = SL_ORIGIN_EXTERNAL;
    sc->value_si[id] = NAN;
    return SL_OK;
}

/* ------------------------------------------------------------------ phase 2 */

/* Copy choice word number V of D into BUF. */
static void choice_word(const sl_param_def *d, int v, char *buf, size_t n)
{
    const char *p = d->choices;
    for (int k = 0; k < v && p; k++) {
        p = strchr(p, '|');
        if (p)
            p++;
    }
    if (!p) {
        buf[0] = '\0';
        return;
    }
    const char *bar = strchr(p, '|');
    size_t wl = bar ? (size_t)(bar - p) : strlen(p);
    if (wl + 1 > n)
        wl = n - 1;
    memcpy(buf, p, wl);
    buf[wl] = '\0';
}


static int section_active(const sl_scenario *sc, int s)
{
    switch (s) {
    case SL_S_IMPACTOR:
    case SL_S_AIRBURST:
    case SL_S_ENTRY:
    case SL_S_PARTITION:
        return sc->kind == SL_SCENARIO_IMPACTOR;
    case SL_S_EXPLOSION:
        return sc->kind == SL_SCENARIO_EXPLOSION;
    default:
        return 1;
    }
}

static int param_active(const sl_scenario *sc, int id)
{
    return section_active(sc, section_index(sl_scenario_params[id].section));
}

/* "FILE:LINE: [sec] key" prefix for messages ("--set sec.key" for a value
 * given on the command line). */
void sl_scenario_where(const sl_scenario *sc, sl_param_id id, char *buf, size_t n)
{
    const sl_param_def *d = &sl_scenario_params[id];
    if (sc->set_key[id])
        snprintf(buf, n, "%s: %s %s.%s", sc->path, sc->set_key[id] == 2 ? "column" : "--set",
                 d->section, d->key);
    else if (sc->line[id] > 0)
        snprintf(buf, n, "%s:%d: [%s] %s", sc->path, sc->line[id], d->section, d->key);
    else
        snprintf(buf, n, "%s: [%s] %s", sc->path, d->section, d->key);
}

static int convert_value(sl_scenario *sc, int id, sl_err *e)
{
    const sl_param_def *d = &sl_scenario_params[id];
    const char *text = sc->raw[id];
    char at[320], range[96];
    sl_scenario_where(sc, id, at, sizeof at);
    sl_scenario_range_text((sl_param_id)id, range, sizeof range);
    switch (d->type) {
    case SL_PT_TEXT:
        if (text[0] == '\0')
            SL_FAIL_RETURN(e, SL_EDATA, "%s: empty value (valid: %s)", at, range);
        sc->value_si[id] = NAN;
        if (d->flags & SL_PF_DATE) {
            double t;
            if (sl_date_parse(text, &t) != 0)
                SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' is not a date (valid: %s)", at, text, range);
            sc->value_si[id] = t; /* seconds since 1970-01-01 00:00:00 UTC */
        }
        return SL_OK;
    case SL_PT_CHOICE: {
        const char *p = d->choices;
        int idx = 0;
        size_t tl = strlen(text);
        while (p && *p) {
            const char *bar = strchr(p, '|');
            size_t wl = bar ? (size_t)(bar - p) : strlen(p);
            if (wl == tl && strncmp(p, text, wl) == 0) {
                sc->value_si[id] = idx;
                return SL_OK;
            }
            idx++;
            p = bar ? bar + 1 : NULL;
        }
        SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' is not a valid choice (valid: %s)", at, text, range);
    }
    case SL_PT_REAL:
    case SL_PT_INT: {
        double v = 0.0;
        if (sl_infile_parse_double(text, &v) != 0) {
            if (sl_dist_looks_like_law(text) && !sl_dist_is_distribution(text)) {
                size_t wl = strcspn(text, " \t(");
                SL_FAIL_RETURN(e, SL_EDATA,
                               "%s: '%.*s' is not a distribution law (valid: %s) and '%s' is not "
                               "a number (valid range: %s)",
                               at, (int)(wl > 40 ? 40 : wl), text, sl_dist_forms(), text, range);
            }
            const char *hint = strchr(text, '#') ? " (an inline comment needs ' ;', not '#')"
                               : sl_dist_is_distribution(text)
                                   ? " but a distribution: run the scenario with 'steamloft ensemble'"
                                   : "";
            SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' is not a number%s (valid range: %s)", at, text,
                           hint, range);
        }
        if (d->type == SL_PT_INT && v != floor(v))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' is not an integer (valid range: %s)", at, text,
                           range);
        if (v < d->min_value || v > d->max_value)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s is out of range (valid range: %s)", at, text, range);
        sc->value_si[id] = v * to_si_factor(id);
        return SL_OK;
    }
    }
    SL_FAIL_RETURN(e, SL_EINTERNAL, "%s: unknown parameter type", at);
}

/* Collins, Melosh & Marcus 2005, eq. 9: yield strength from bulk density. */
static double strength_from_density_Pa(double density_kg_m3)
{
    return pow(10.0, 2.107 + 0.0624 * sqrt(density_kg_m3));
}

/* Fill derived defaults and check relations between keys. */
static int resolve(sl_scenario *sc, sl_err *e)
{
    /* The month follows from a date; a month written too must agree. */
    if ((sc->origin[SL_P_SITE_DATE] == SL_ORIGIN_FILE || sc->origin[SL_P_SITE_DATE] == SL_ORIGIN_SET) &&
        isfinite(sc->value_si[SL_P_SITE_DATE])) {
        sl_date_fields f;
        sl_date_split(sc->value_si[SL_P_SITE_DATE], &f);
        sl_param_origin om = sc->origin[SL_P_SITE_MONTH];
        const double given = sc->value_si[SL_P_SITE_MONTH];
        if ((om == SL_ORIGIN_FILE || om == SL_ORIGIN_SET) && isfinite(given) && given != 0.0 &&
            (int)lround(given) != f.month) {
            char at[320];
            sl_scenario_where(sc, SL_P_SITE_MONTH, at, sizeof at);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: %d does not agree with [site] date = %s (valid: %d, or leave month "
                           "out: it follows from the date)",
                           at, (int)lround(given), sc->raw[SL_P_SITE_DATE], f.month);
        }
        sc->value_si[SL_P_SITE_MONTH] = f.month;
        if (om != SL_ORIGIN_FILE && om != SL_ORIGIN_SET) {
            snprintf(sc->raw[SL_P_SITE_MONTH], sizeof sc->raw[SL_P_SITE_MONTH], "%d", f.month);
            sc->origin[SL_P_SITE_MONTH] = SL_ORIGIN_DERIVED;
        }
    }
    /* Site-aware defaults: the rules are site.c's (the one place). */
    {
        const double lat = sl_rad_to_deg(sc->value_si[SL_P_SITE_LATITUDE]);
        const double mv = sc->value_si[SL_P_SITE_MONTH];
        const int month = isfinite(mv) ? (int)lround(mv) : 0;
        sl_param_origin oa = sc->origin[SL_P_SITE_ATMOSPHERE], os = sc->origin[SL_P_SITE_SST];
        if (isfinite(lat) && oa != SL_ORIGIN_FILE && oa != SL_ORIGIN_SET) {
            snprintf(sc->raw[SL_P_SITE_ATMOSPHERE], sizeof sc->raw[SL_P_SITE_ATMOSPHERE], "%s",
                     sl_site_atmosphere(lat, month, NULL, 0));
            sc->origin[SL_P_SITE_ATMOSPHERE] = SL_ORIGIN_DERIVED;
        }
        if (isfinite(lat) && os != SL_ORIGIN_FILE && os != SL_ORIGIN_SET && os != SL_ORIGIN_EXTERNAL) {
            sc->value_si[SL_P_SITE_SST] = sl_site_sea_surface_K(lat, month, NULL, 0);
            sc->origin[SL_P_SITE_SST] = SL_ORIGIN_DERIVED;
        }
    }
    if (sc->kind == SL_SCENARIO_IMPACTOR) {
        sl_param_origin o = sc->origin[SL_P_IMPACTOR_STRENGTH];
        if (o != SL_ORIGIN_FILE && o != SL_ORIGIN_SET && o != SL_ORIGIN_EXTERNAL) {
            double rho = sc->value_si[SL_P_IMPACTOR_DENSITY];
            /* Irons (5000 kg/m3 and more): the measured iron strength of [entry]. */
            sc->value_si[SL_P_IMPACTOR_STRENGTH] =
                !isfinite(rho) ? NAN
                : rho >= 5000.0 ? sc->value_si[SL_P_ENTRY_IRON_STRENGTH]
                                : strength_from_density_Pa(rho);
            sc->origin[SL_P_IMPACTOR_STRENGTH] = SL_ORIGIN_DERIVED;
        }
        double za = sc->value_si[SL_P_AIRBURST_ALTITUDE];
        double z0 = sc->value_si[SL_P_ENTRY_START_ALTITUDE];
        if (isfinite(za) && isfinite(z0) && za >= z0) {
            char at[320];
            sl_scenario_where(sc, SL_P_AIRBURST_ALTITUDE, at, sizeof at);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: %g m is not below [entry] start_altitude_m = %g m (valid range: "
                           "0 to the start altitude)",
                           at, za, z0);
        }
    }
    return SL_OK;
}

/* Whether section S is in the file or was named by an override. */
static int section_present(const sl_scenario *sc, int s)
{
    return sc->section_line[s] > 0 || sc->set_section[s];
}

/* "FILE:LINE" of section S, or "FILE (--set)" for one only an override names. */
static void section_where(const sl_scenario *sc, int s, char *buf, size_t n)
{
    if (sc->section_line[s] > 0)
        snprintf(buf, n, "%s:%d", sc->path, sc->section_line[s]);
    else
        snprintf(buf, n, "%s (--set %s.*)", sc->path, sl_scenario_section_names[s]);
}

static int override_key(sl_scenario *sc, const char *assignment, unsigned char how, sl_err *e);

int sl_scenario_override(sl_scenario *sc, const char *assignment, sl_err *e)
{
    return override_key(sc, assignment, 1, e);
}

int sl_scenario_override_column(sl_scenario *sc, const char *assignment, sl_err *e)
{
    return override_key(sc, assignment, 2, e);
}

static int override_key(sl_scenario *sc, const char *assignment, unsigned char how, sl_err *e)
{
    if (sc->finished)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "--set after the scenario was finished");
    const char *eq = assignment ? strchr(assignment, '=') : NULL;
    if (eq == NULL)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--set '%s': want SECTION.KEY=VALUE, e.g. --set "
                                     "impactor.diameter_m=250",
                       assignment ? assignment : "");
    char name[128];
    const char *key = assignment;
    while (key < eq && isspace((unsigned char)*key))
        key++;
    size_t nl = (size_t)(eq - key);
    while (nl > 0 && isspace((unsigned char)key[nl - 1]))
        nl--;
    if (nl >= sizeof name)
        nl = sizeof name - 1;
    memcpy(name, key, nl);
    name[nl] = '\0';
    const char *value = eq + 1;
    while (isspace((unsigned char)*value))
        value++;
    size_t vl = strlen(value);
    while (vl > 0 && isspace((unsigned char)value[vl - 1]))
        vl--;
    int id = sl_scenario_find(name);
    if (id < 0) {
        char known[512] = "";
        const char *dot = strchr(name, '.');
        if (dot) {
            char sec[64];
            size_t sl = (size_t)(dot - name) < sizeof sec ? (size_t)(dot - name) : sizeof sec - 1;
            memcpy(sec, name, sl);
            sec[sl] = '\0';
            if (section_index(sec) >= 0) {
                char keys[360];
                list_keys(sec, keys, sizeof keys);
                snprintf(known, sizeof known, " (keys of [%s]: %s)", sec, keys);
            } else {
                char secs[360];
                list_sections(secs, sizeof secs);
                snprintf(known, sizeof known, " (sections: %s)", secs);
            }
        }
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "--set '%s': unknown key '%s'%s; keys are SECTION.KEY as 'steamloft params' "
                       "lists them",
                       assignment, name, known);
    }
    if (vl == 0 || vl >= SL_SCENARIO_RAW_LEN) {
        char range[96];
        sl_scenario_range_text((sl_param_id)id, range, sizeof range);
        SL_FAIL_RETURN(e, SL_EUSAGE, "--set %s: %s value (valid: %s)", name,
                       vl == 0 ? "empty" : "too long a", range);
    }
    memcpy(sc->raw[id], value, vl);
    sc->raw[id][vl] = '\0';
    sc->set_key[id] = how;
    sc->line[id] = 0;
    sc->set_section[section_index(sl_scenario_params[id].section)] = 1;
    return SL_OK;
}

int sl_scenario_finish(sl_scenario *sc, sl_err *e)
{
    int has_imp = section_present(sc, SL_S_IMPACTOR);
    int has_exp = section_present(sc, SL_S_EXPLOSION);
    if (has_imp && has_exp) {
        char a[SL_SCENARIO_PATH_LEN + 40], b[SL_SCENARIO_PATH_LEN + 40];
        section_where(sc, SL_S_EXPLOSION, a, sizeof a);
        section_where(sc, SL_S_IMPACTOR, b, sizeof b);
        SL_FAIL_RETURN(e, SL_ECONFIG, "%s: [explosion] cannot go with [impactor] (%s): give one of them",
                       a, b);
    }
    if (!has_imp && !has_exp)
        SL_FAIL_RETURN(e, SL_ECONFIG,
                       "%s: needs an [impactor] section (diameter_m, density_kg_m3, speed_km_s, "
                       "angle_deg) or an [explosion] section (energy_Mt)",
                       sc->path);
    sc->kind = has_imp ? SL_SCENARIO_IMPACTOR : SL_SCENARIO_EXPLOSION;
    for (int s = 0; s < SL_S_COUNT; s++)
        if (section_present(sc, s) && !section_active(sc, s)) {
            char at[SL_SCENARIO_PATH_LEN + 40];
            section_where(sc, s, at, sizeof at);
            SL_FAIL_RETURN(e, SL_ECONFIG, "%s: section [%s] does not apply to an [%s] scenario", at,
                           sl_scenario_section_names[s], has_imp ? "impactor" : "explosion");
        }

    for (int id = 0; id < SL_P_COUNT; id++) {
        const sl_param_def *d = &sl_scenario_params[id];
        if (sc->origin[id] == SL_ORIGIN_EXTERNAL || sc->origin[id] == SL_ORIGIN_SET)
            continue;
        if (!param_active(sc, id)) {
            sc->origin[id] = SL_ORIGIN_UNSET;
            sc->value_si[id] = NAN;
            continue;
        }
        if (sc->line[id] > 0 || sc->set_key[id]) {
            SL_TRY_RETURN(e, convert_value(sc, id, e));
            sc->origin[id] = sc->set_key[id] ? SL_ORIGIN_SET : SL_ORIGIN_FILE;
            continue;
        }
        if (d->flags & SL_PF_REQUIRED) {
            char range[96];
            sl_scenario_range_text((sl_param_id)id, range, sizeof range);
            int sl = sc->section_line[section_index(d->section)];
            if (sl > 0)
                SL_FAIL_RETURN(e, SL_ECONFIG,
                               "%s:%d: [%s] %s is required: %s (valid range: %s)", sc->path, sl,
                               d->section, d->key, d->meaning, range);
            SL_FAIL_RETURN(e, SL_ECONFIG, "%s: [%s] %s is required: %s (valid range: %s)", sc->path,
                           d->section, d->key, d->meaning, range);
        }
        if (d->type == SL_PT_TEXT && (d->flags & SL_PF_OPTIONAL)) {
            sc->raw[id][0] = '\0'; /* optional text (the name, the date): stays unset */
            sc->value_si[id] = NAN;
            sc->origin[id] = SL_ORIGIN_UNSET;
        } else if (d->type == SL_PT_TEXT) {
            /* The atmosphere: derived from latitude and month in resolve(). */
            sc->raw[id][0] = '\0';
            sc->origin[id] = SL_ORIGIN_UNSET;
        } else if (d->type == SL_PT_CHOICE) {
            sc->value_si[id] = d->default_value;
            choice_word(d, (int)d->default_value, sc->raw[id], sizeof sc->raw[id]);
            sc->origin[id] = SL_ORIGIN_DEFAULT;
        } else if (!isnan(d->default_value)) {
            sc->value_si[id] = d->default_value * to_si_factor(id);
            sc->origin[id] = SL_ORIGIN_DEFAULT;
        } else {
            sc->value_si[id] = NAN;
            sc->origin[id] = SL_ORIGIN_UNSET; /* optional or derived: resolved below */
        }
    }
    /* [airburst]: both keys or neither. */
    if (sc->kind == SL_SCENARIO_IMPACTOR) {
        int ha = sc->origin[SL_P_AIRBURST_ALTITUDE] != SL_ORIGIN_UNSET;
        int hf = sc->origin[SL_P_AIRBURST_FRACTION] != SL_ORIGIN_UNSET;
        if (ha != hf) {
            int given = ha ? SL_P_AIRBURST_ALTITUDE : SL_P_AIRBURST_FRACTION;
            int missing = ha ? SL_P_AIRBURST_FRACTION : SL_P_AIRBURST_ALTITUDE;
            char range[96];
            sl_scenario_range_text((sl_param_id)missing, range, sizeof range);
            SL_FAIL_RETURN(e, SL_ECONFIG,
                           "%s:%d: [airburst] %s is required when %s is given (valid range: %s)",
                           sc->path, sc->line[given], sl_scenario_params[missing].key,
                           sl_scenario_params[given].key, range);
        }
    }
    SL_TRY_RETURN(e, resolve(sc, e));
    sc->finished = 1;
    return SL_OK;
}

int sl_scenario_load(sl_scenario *sc, const char *path, sl_err *e)
{
    SL_TRY_RETURN(e, sl_scenario_read(sc, path, e));
    SL_TRY_RETURN(e, sl_scenario_finish(sc, e));
    return SL_OK;
}

int sl_scenario_load_string(sl_scenario *sc, const char *name, const char *text, sl_err *e)
{
    SL_TRY_RETURN(e, sl_scenario_read_string(sc, name, text, e));
    SL_TRY_RETURN(e, sl_scenario_finish(sc, e));
    return SL_OK;
}

/* ------------------------------------------------------------------ access */

int sl_scenario_set_id(sl_scenario *sc, sl_param_id id, double value_si, sl_err *e)
{
    if ((int)id < 0 || id >= SL_P_COUNT || !is_numeric((int)id))
        SL_FAIL_RETURN(e, SL_EUSAGE, "scenario parameter %d is not numeric", (int)id);
    const sl_param_def *d = &sl_scenario_params[id];
    char range[96]; /* the valid range as text: formatted only for a message */
    if (sc->kind != SL_SCENARIO_NONE && !param_active(sc, (int)id))
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s.%s does not apply to this scenario (no [%s] section)",
                       d->section, d->key, d->section);
    double f = to_si_factor((int)id);
    double v = value_si / f; /* back in the key's unit for the range check */
    double slack = 1e-12 * fmax(fabs(d->min_value), fabs(d->max_value));
    if (!isfinite(value_si) || v < d->min_value - slack || v > d->max_value + slack) {
        sl_scenario_range_text(id, range, sizeof range);
        SL_FAIL_RETURN(e, SL_EDATA, "%s: %s.%s = %g %s (SI %g) is out of range (valid range: %s)",
                       sc->path, d->section, d->key, v, sl_scenario_unit_symbol(id), value_si, range);
    }
    if (d->type == SL_PT_INT && v != floor(v)) {
        sl_scenario_range_text(id, range, sizeof range);
        SL_FAIL_RETURN(e, SL_EDATA, "%s: %s.%s = %g is not an integer (valid range: %s)", sc->path,
                       d->section, d->key, v, range);
    }
    sc->value_si[id] = value_si;
    sc->origin[id] = SL_ORIGIN_SET;
    if (sc->finished)
        SL_TRY_RETURN(e, resolve(sc, e));
    return SL_OK;
}

int sl_scenario_set_text(sl_scenario *sc, sl_param_id id, const char *text, sl_err *e)
{
    if ((int)id < 0 || id >= SL_P_COUNT || is_numeric((int)id))
        SL_FAIL_RETURN(e, SL_EUSAGE, "scenario parameter %d is not a text key", (int)id);
    const sl_param_def *d = &sl_scenario_params[id];
    if (sc->kind != SL_SCENARIO_NONE && !param_active(sc, (int)id))
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s.%s does not apply to this scenario (no [%s] section)",
                       d->section, d->key, d->section);
    if (strlen(text) >= SL_SCENARIO_RAW_LEN)
        SL_FAIL_RETURN(e, SL_EUSAGE, "%s.%s: value longer than %d characters", d->section, d->key,
                       SL_SCENARIO_RAW_LEN - 1);
    snprintf(sc->raw[id], sizeof sc->raw[id], "%s", text);
    sc->line[id] = 0;
    SL_TRY_RETURN(e, convert_value(sc, (int)id, e));
    sc->origin[id] = SL_ORIGIN_SET;
    if (sc->finished)
        SL_TRY_RETURN(e, resolve(sc, e));
    return SL_OK;
}

int sl_scenario_set_values(sl_scenario *sc, size_t n, const sl_param_id *ids, const double *values_si,
                           const char *const *texts, sl_err *e)
{
    const int finished = sc->finished;
    sc->finished = 0; /* no resolve per key: once, below */
    for (size_t k = 0; k < n; k++) {
        int rc = texts && texts[k] ? sl_scenario_set_text(sc, ids[k], texts[k], e)
                                   : sl_scenario_set_id(sc, ids[k], values_si[k], e);
        if (rc != SL_OK) {
            sc->finished = finished;
            return rc;
        }
    }
    sc->finished = finished;
    if (finished)
        SL_TRY_RETURN(e, resolve(sc, e));
    return SL_OK;
}

int sl_scenario_set(sl_scenario *sc, const char *section_dot_key, double value_si, sl_err *e)
{
    int id = sl_scenario_find(section_dot_key);
    if (id < 0)
        SL_FAIL_RETURN(e, SL_EUSAGE, "unknown scenario parameter '%s' (want section.key, as "
                                     "listed by 'steamloft params')",
                       section_dot_key ? section_dot_key : "(null)");
    return sl_scenario_set_id(sc, (sl_param_id)id, value_si, e);
}

double sl_scenario_value(const sl_scenario *sc, sl_param_id id)
{
    return sc->value_si[id];
}

int sl_scenario_has(const sl_scenario *sc, sl_param_id id)
{
    sl_param_origin o = sc->origin[id];
    return o == SL_ORIGIN_DEFAULT || o == SL_ORIGIN_DERIVED || o == SL_ORIGIN_FILE ||
           o == SL_ORIGIN_SET;
}

const char *sl_scenario_text(const sl_scenario *sc, sl_param_id id)
{
    const sl_param_def *d = &sl_scenario_params[id];
    if (d->type == SL_PT_TEXT)
        return sc->raw[id];
    /* Choices: raw holds the word, written or filled in from the default. */
    return sc->raw[id];
}

void sl_scenario_name(const sl_scenario *sc, char *buf, size_t n)
{
    if (n == 0)
        return;
    sl_param_origin no = sc->origin[SL_P_SCENARIO_NAME];
    if ((no == SL_ORIGIN_FILE || no == SL_ORIGIN_SET) && sc->raw[SL_P_SCENARIO_NAME][0]) {
        snprintf(buf, n, "%s", sc->raw[SL_P_SCENARIO_NAME]);
        return;
    }
    sl_scenario_path_stem(sc->path, buf, n);
}

void sl_scenario_path_stem(const char *path, char *buf, size_t n)
{
    if (n == 0)
        return;
    const char *base = strrchr(path, '/');
    base = base ? base + 1 : path;
    if (strcmp(base, "<stdin>") == 0 || base[0] == '\0')
        base = "stdin";
    const char *dot = strrchr(base, '.');
    size_t len = (dot && dot != base) ? (size_t)(dot - base) : strlen(base);
    if (len >= n)
        len = n - 1;
    memcpy(buf, base, len);
    buf[len] = '\0';
}

const char *sl_scenario_raw(const sl_scenario *sc, sl_param_id id, int *line)
{
    if (line)
        *line = sc->line[id];
    return (sc->line[id] > 0 || sc->set_key[id]) ? sc->raw[id] : NULL;
}

size_t sl_scenario_provenance(const sl_scenario *sc, sl_param_value *out, size_t max)
{
    size_t count = 0;
    for (int id = 0; id < SL_P_COUNT; id++) {
        if (sc->kind != SL_SCENARIO_NONE && !param_active(sc, id))
            continue;
        if (!sl_scenario_has(sc, (sl_param_id)id))
            continue;
        if (count < max && out) {
            const sl_param_def *d = &sl_scenario_params[id];
            sl_param_value *r = &out[count];
            memset(r, 0, sizeof *r);
            r->id = id;
            snprintf(r->name, sizeof r->name, "%s.%s", d->section, d->key);
            r->unit = sl_scenario_unit_symbol((sl_param_id)id);
            r->si_unit = sl_scenario_si_unit((sl_param_id)id);
            r->origin = sl_scenario_origin_name(sc->origin[id]);
            r->line = sc->line[id];
            if (d->type == SL_PT_TEXT) {
                r->value = r->value_si = NAN;
                snprintf(r->text, sizeof r->text, "%s", sl_scenario_text(sc, (sl_param_id)id));
            } else if (d->type == SL_PT_CHOICE) {
                r->value = r->value_si = NAN;
                snprintf(r->text, sizeof r->text, "%s", sc->raw[id]);
            } else {
                r->value_si = sc->value_si[id];
                r->value = r->value_si / to_si_factor(id);
                snprintf(r->text, sizeof r->text, "%.10g", r->value);
            }
        }
        count++;
    }
    return count;
}

void sl_scenario_free(sl_scenario *sc)
{
    if (sc)
        memset(sc, 0, sizeof *sc);
}
