/* ensemble: uncertain inputs, sampling, the member loop and its statistics.
 *
 * No physics lives here: an ensemble member is the ordinary chain run on
 * sampled inputs (the model callback, bound in cmd_ensemble.c).  What this
 * file does:
 *
 * - Sampling the distributions of src/dist.c (each by its inverse CDF).
 * - Monte Carlo with the MT19937 draws of gsl_rng_mt19937 (made lazily, to the
 *   bit GSL's: src/rng.c), one seed per member from the base seed
 *   and the member index through splitmix64 (Steele, Lea & Flood 2014) and the
 *   MurmurHash3 32-bit finaliser (a bijection, so seeds within a run are
 *   distinct); Sobol low-discrepancy points (gsl_qrng_sobol, Bratley & Fox
 *   1988, dimension checked against GSL's limit of 40); grids for sweeps.
 * - The member loop: blocks of members, OpenMP threads each with its own model
 *   workspace and generator, optional MPI ranks (member m on rank m % size,
 *   gathered with MPI_Gatherv to rank 0); every member writes only its own
 *   slot and all reductions run serially in member order afterwards, so the
 *   results are bit-identical for any thread or rank count.
 * - Statistics over the members that succeeded: percentiles (type-7 linear
 *   interpolation of Hyndman & Fan 1996, as gsl_stats_quantile_from_sorted_data
 *   computes it), exceedance fractions with binomial standard errors, Spearman
 *   rank correlation (gsl_stats_spearman, average ranks for ties).
 * - A progress bar on stderr (rate and time left). */
#include "steamloft/ensemble.h"
#include "steamloft/rng.h"
#include "steamloft/sort.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_qrng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include <ctype.h>
#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#ifdef _OPENMP
#include <omp.h>
#endif
#ifdef SL_HAVE_MPI
#include <mpi.h>
#endif

/* ================================================================ seeding */

uint64_t sl_ens_splitmix64(uint64_t x)
{
    uint64_t z = x + UINT64_C(0x9e3779b97f4a7c15);
    z = (z ^ (z >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94d049bb133111eb);
    return z ^ (z >> 31);
}

/* MurmurHash3 fmix32: invertible (each step is a bijection on 32 bits). */
static uint32_t fmix32(uint32_t h)
{
    h ^= h >> 16;
    h *= UINT32_C(0x85ebca6b);
    h ^= h >> 13;
    h *= UINT32_C(0xc2b2ae35);
    h ^= h >> 16;
    return h;
}

unsigned long sl_ens_member_seed(uint64_t base_seed, uint64_t member)
{
    uint64_t k = sl_ens_splitmix64(base_seed);
    uint32_t key = (uint32_t)(k ^ (k >> 32));
    return (unsigned long)fmix32(key + (uint32_t)member);
}

/* ================================================================ plan */

int sl_ens_plan_add(sl_ens_plan *p, const char *key, double to_si, sl_dist *d, sl_err *e)
{
    if (strlen(key) >= SL_ENS_KEY_LEN)
        SL_FAIL_RETURN(e, SL_EUSAGE, "key '%.40s...' is too long", key);
    for (size_t i = 0; i < p->n_inputs; i++)
        if (strcmp(p->inputs[i].key, key) == 0)
            SL_FAIL_RETURN(e, SL_EUSAGE, "'%s' is given twice", key);
    sl_ens_input *ni = realloc(p->inputs, (p->n_inputs + 1) * sizeof *ni);
    if (ni == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory adding '%s'", key);
    p->inputs = ni;
    sl_ens_input *in = &p->inputs[p->n_inputs++];
    memset(in, 0, sizeof *in);
    snprintf(in->key, sizeof in->key, "%s", key);
    in->to_si = to_si;
    in->dist = *d;
    memset(d, 0, sizeof *d);
    return SL_OK;
}

enum { VARY_MAX_VALUES = 100000 };

int sl_ens_parse_vary(const char *spec, char *key_out, sl_dist *d, sl_err *e)
{
    memset(d, 0, sizeof *d);
    const char *form = "KEY=START:STOP:STEP or KEY=V1,V2,... (KEY as section.key)";
    const char *eq = strchr(spec, '=');
    if (eq == NULL || eq == spec)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': expected %s", spec, form);
    size_t kl = (size_t)(eq - spec);
    if (kl >= SL_ENS_KEY_LEN)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': key too long", spec);
    memcpy(key_out, spec, kl);
    key_out[kl] = '\0';
    if (strchr(key_out, '.') == NULL)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': key '%s' must be section.key", spec, key_out);
    const char *v = eq + 1;
    double *vals = NULL;
    size_t nv = 0;
    if (strchr(v, ':') != NULL) {
        double x[3];
        const char *s = v;
        for (int k = 0; k < 3; k++) {
            char *end = NULL;
            errno = 0;
            x[k] = strtod(s, &end);
            char want = k < 2 ? ':' : '\0';
            if (end == s || *end != want || errno == ERANGE || !isfinite(x[k]))
                SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': expected %s", spec, form);
            s = end + (k < 2);
        }
        if (x[2] == 0 || (x[1] - x[0]) * x[2] < 0)
            SL_FAIL_RETURN(e, SL_EUSAGE,
                           "--vary '%s': STEP must be non-zero and point from START to STOP", spec);
        double steps = (x[1] - x[0]) / x[2];
        if (steps + 1 > VARY_MAX_VALUES)
            SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': more than %d values", spec, VARY_MAX_VALUES);
        nv = (size_t)floor(steps + 1e-9) + 1;
        vals = malloc(nv * sizeof *vals);
        if (vals == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "--vary '%s': out of memory", spec);
        for (size_t i = 0; i < nv; i++)
            vals[i] = x[0] + (double)i * x[2];
    } else {
        size_t cap = 1;
        for (const char *q = v; *q; q++)
            cap += *q == ',';
        if (cap > VARY_MAX_VALUES)
            SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': more than %d values", spec, VARY_MAX_VALUES);
        vals = malloc(cap * sizeof *vals);
        if (vals == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "--vary '%s': out of memory", spec);
        const char *s = v;
        for (;;) {
            char *end = NULL;
            errno = 0;
            double x = strtod(s, &end);
            while (end && isspace((unsigned char)*end))
                end++;
            if (end == s || (*end != ',' && *end != '\0') || errno == ERANGE || !isfinite(x)) {
                free(vals);
                SL_FAIL_RETURN(e, SL_EUSAGE, "--vary '%s': expected %s", spec, form);
            }
            vals[nv++] = x;
            if (*end == '\0')
                break;
            s = end + 1;
        }
    }
    d->kind = SL_DIST_CHOICE;
    d->values = vals;
    d->n_values = nv;
    return SL_OK;
}

int sl_ens_plan_finish(sl_ens_plan *p, sl_err *e)
{
    if (p->mode == SL_ENS_GRID) {
        if (p->n_inputs == 0)
            SL_FAIL_RETURN(e, SL_EUSAGE, "a sweep needs at least one --vary");
        double total = 1;
        for (size_t i = 0; i < p->n_inputs; i++) {
            if (p->inputs[i].dist.kind != SL_DIST_CHOICE)
                SL_FAIL_RETURN(e, SL_EINTERNAL, "grid input '%s' is not a list", p->inputs[i].key);
            total *= (double)p->inputs[i].dist.n_values;
        }
        if (total > 1e8)
            SL_FAIL_RETURN(e, SL_EUSAGE, "the grid has %.3g points; at most 1e8", total);
        p->n_members = (size_t)total;
    }
    if (p->mode == SL_ENS_SOBOL && (p->n_inputs < 1 || p->n_inputs > SL_ENS_SOBOL_MAX_DIM))
        SL_FAIL_RETURN(e, SL_EUSAGE,
                       "--sobol needs 1 to %d uncertain inputs (gsl_qrng_sobol's limit); the "
                       "scenario has %zu",
                       (int)SL_ENS_SOBOL_MAX_DIM, p->n_inputs);
    if (p->n_members == 0)
        SL_FAIL_RETURN(e, SL_EUSAGE, "the ensemble has no members");
    return SL_OK;
}

void sl_ens_plan_free(sl_ens_plan *p)
{
    if (p == NULL)
        return;
    for (size_t i = 0; i < p->n_inputs; i++) {
        sl_dist_free(&p->inputs[i].dist);
        for (size_t k = 0; k < p->inputs[i].n_labels; k++)
            free(p->inputs[i].labels[k]);
        free(p->inputs[i].labels);
    }
    free(p->inputs);
    memset(p, 0, sizeof *p);
}

/* ---------------------------------------------------------------- sampling */

static void sample_mc(const sl_ens_plan *p, sl_rng *r, size_t m, double *x)
{
    sl_rng_set(r, sl_ens_member_seed(p->seed, m));
    for (size_t k = 0; k < p->n_inputs; k++)
        x[k] = sl_dist_quantile(&p->inputs[k].dist, sl_rng_uniform_pos(r));
}

static void sample_grid(const sl_ens_plan *p, size_t m, double *x)
{
    for (size_t k = p->n_inputs; k-- > 0;) {
        const sl_dist *d = &p->inputs[k].dist;
        x[k] = d->values[m % d->n_values];
        m /= d->n_values;
    }
}

/* Next Sobol point mapped through the inverse CDFs.  GSL's Sobol points lie
 * strictly inside (0,1) after the first point (0.5, ...); the clamp guards
 * the inverse normal against an endpoint. */
static int sample_sobol_next(const sl_ens_plan *p, gsl_qrng *q, double *u, double *x, sl_err *e)
{
    if (gsl_qrng_get(q, u) != 0)
        SL_FAIL_RETURN(e, SL_ENUMERIC, "gsl_qrng_get failed");
    for (size_t k = 0; k < p->n_inputs; k++) {
        double uk = u[k];
        if (uk <= 0)
            uk = 0x1p-53;
        if (uk >= 1)
            uk = 1 - 0x1p-53;
        x[k] = sl_dist_quantile(&p->inputs[k].dist, uk);
    }
    return SL_OK;
}

int sl_ens_sample(const sl_ens_plan *p, size_t first, size_t count, double *values, sl_err *e)
{
    size_t ni = p->n_inputs;
    if (p->mode == SL_ENS_GRID) {
        for (size_t i = 0; i < count; i++)
            sample_grid(p, first + i, values + i * ni);
        return SL_OK;
    }
    if (p->mode == SL_ENS_MONTE_CARLO) {
        sl_rng r; /* 2.5 kB, no allocation */
        for (size_t i = 0; i < count; i++)
            sample_mc(p, &r, first + i, values + i * ni);
        return SL_OK;
    }
    gsl_qrng *q = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)ni);
    double *u = malloc((ni + 1) * sizeof *u);
    double *skip = malloc((ni + 1) * sizeof *skip);
    int rc = SL_OK;
    if (q == NULL || u == NULL || skip == NULL) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "cannot allocate the Sobol generator");
    } else {
        for (size_t i = 0; i < first && rc == SL_OK; i++)
            rc = sample_sobol_next(p, q, u, skip, e);
        for (size_t i = 0; i < count && rc == SL_OK; i++)
            rc = sample_sobol_next(p, q, u, values + i * ni, e);
    }
    free(u);
    free(skip);
    if (q)
        gsl_qrng_free(q);
    return rc;
}

/* ================================================================ the column store */

/* Rows buffered before they are written, one column at a time (each write
 * STORE_ROWS doubles). */
enum { STORE_ROWS = 4096 };

static int write_all(int fd, const void *buf, size_t len, off_t off)
{
    const char *p = buf;
    while (len > 0) {
        ssize_t w = pwrite(fd, p, len, off);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0)
            return -1;
        p += w;
        len -= (size_t)w;
        off += (off_t)w;
    }
    return 0;
}

static int read_all(int fd, void *buf, size_t len, off_t off)
{
    char *p = buf;
    while (len > 0) {
        ssize_t w = pread(fd, p, len, off);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            if (w == 0)
                errno = EIO; /* short file */
            return -1;
        }
        p += w;
        len -= (size_t)w;
        off += (off_t)w;
    }
    return 0;
}

/* Make the store file in DIR and unlink it at once. */
static int store_open(sl_ens_result *r, const char *dir, sl_err *e)
{
    char path[4096];
    int w = snprintf(path, sizeof path, "%s/.steamloft-members-XXXXXX", dir);
    if (w < 0 || (size_t)w >= sizeof path)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "%s: directory name too long for the member store", dir);
    int fd = mkstemp(path);
    if (fd < 0)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "%s: cannot create the member store: %s", dir, strerror(errno));
    (void)unlink(path);
    r->on_disk = 1;
    r->store_fd = fd;
    r->store_buf = malloc(((size_t)STORE_ROWS * (r->n_inputs + r->n_outputs + 1)) * sizeof *r->store_buf);
    if (r->store_buf == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the member store");
    return SL_OK;
}

static int store_flush(sl_ens_result *r, sl_err *e)
{
    size_t nc = r->n_inputs + r->n_outputs, k = r->store_rows;
    if (!r->on_disk || k == 0)
        return SL_OK;
    double *col = r->store_buf + (size_t)STORE_ROWS * nc;
    for (size_t c = 0; c < nc; c++) {
        for (size_t q = 0; q < k; q++)
            col[q] = r->store_buf[q * nc + c];
        off_t off = (off_t)((c * r->n_members + r->store_first) * sizeof(double));
        if (write_all(r->store_fd, col, k * sizeof(double), off) != 0)
            SL_FAIL_RETURN(e, SL_EIO, "writing the member store: %s", strerror(errno));
    }
    r->store_first += k;
    r->store_rows = 0;
    return SL_OK;
}

/* Keep member MI's scalars (members come in order). */
static int store_put(sl_ens_result *r, size_t mi, const double *in, const double *out, sl_err *e)
{
    size_t ni = r->n_inputs, no = r->n_outputs;
    if (!r->on_disk) {
        memcpy(r->inputs + mi * ni, in, ni * sizeof *in);
        memcpy(r->outputs + mi * no, out, no * sizeof *out);
        return SL_OK;
    }
    double *row = r->store_buf + r->store_rows * (ni + no);
    memcpy(row, in, ni * sizeof *in);
    memcpy(row + ni, out, no * sizeof *out);
    if (++r->store_rows == STORE_ROWS)
        return store_flush(r, e);
    return SL_OK;
}

int sl_ens_column(const sl_ens_result *r, size_t c, double *buf, sl_err *e)
{
    size_t n = r->n_members, ni = r->n_inputs, no = r->n_outputs;
    if (c >= ni + no)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "column %zu of %zu", c, ni + no);
    if (r->on_disk) {
        if (read_all(r->store_fd, buf, n * sizeof *buf, (off_t)(c * n * sizeof *buf)) != 0)
            SL_FAIL_RETURN(e, SL_EIO, "reading the member store: %s", strerror(errno));
        return SL_OK;
    }
    for (size_t m = 0; m < n; m++)
        buf[m] = c < ni ? r->inputs[m * ni + c] : r->outputs[m * no + (c - ni)];
    return SL_OK;
}

/* ================================================================ the member loop */

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int sl_ens_is_root(void)
{
#ifdef SL_HAVE_MPI
    int init = 0, rank = 0;
    MPI_Initialized(&init);
    if (init)
        MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    return rank == 0;
#else
    return 1;
#endif
}

void sl_ens_mpi_begin(void)
{
#ifdef SL_HAVE_MPI
    int init = 0, provided = 0;
    MPI_Initialized(&init);
    if (!init)
        MPI_Init_thread(NULL, NULL, MPI_THREAD_FUNNELED, &provided);
#endif
}

void sl_ens_mpi_end(void)
{
#ifdef SL_HAVE_MPI
    int init = 0, fin = 0;
    MPI_Initialized(&init);
    MPI_Finalized(&fin);
    if (init && !fin)
        MPI_Finalize();
#endif
}

int sl_ens_share_stdin(char **text, size_t max_bytes, sl_err *e)
{
    *text = NULL;
#ifdef SL_HAVE_MPI
    int init = 0, size = 1, rank = 0;
    MPI_Initialized(&init);
    if (init) {
        MPI_Comm_size(MPI_COMM_WORLD, &size);
        MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    }
    if (size < 2)
        return SL_OK;
    /* hdr[0] status, hdr[1] length */
    long long hdr[2] = {SL_OK, 0};
    char *buf = NULL;
    if (rank == 0) {
        buf = malloc(max_bytes + 2);
        if (buf == NULL) {
            hdr[0] = SL_ENOMEM;
        } else {
            size_t n = fread(buf, 1, max_bytes + 1, stdin);
            if (ferror(stdin))
                hdr[0] = SL_EIO;
            else if (n > max_bytes)
                hdr[0] = SL_ECONFIG;
            hdr[1] = (long long)n;
        }
    }
    MPI_Bcast(hdr, 2, MPI_LONG_LONG, 0, MPI_COMM_WORLD);
    if (hdr[0] != SL_OK) {
        free(buf);
        SL_FAIL_RETURN(e, (int)hdr[0], "<stdin>: %s", hdr[0] == SL_EIO ? "read error"
                       : hdr[0] == SL_ECONFIG ? "too large for a scenario file" : "out of memory");
    }
    size_t n = (size_t)hdr[1];
    if (rank != 0) {
        buf = malloc(n + 1);
        if (buf == NULL)
            MPI_Abort(MPI_COMM_WORLD, 71); /* cannot take part in the collective any more */
    }
    MPI_Bcast(buf, (int)n, MPI_CHAR, 0, MPI_COMM_WORLD);
    buf[n] = '\0';
    *text = buf;
#else
    (void)max_bytes;
    (void)e;
#endif
    return SL_OK;
}

int sl_ens_agree(int status, sl_err *e)
{
#ifdef SL_HAVE_MPI
    int init = 0, size = 1;
    MPI_Initialized(&init);
    if (init)
        MPI_Comm_size(MPI_COMM_WORLD, &size);
    if (size > 1) {
        int worst = status;
        MPI_Allreduce(&status, &worst, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
        if (status == SL_OK && worst != SL_OK)
            return sl_err_set(e, worst, __func__, __LINE__, "another MPI rank failed (%s)",
                              sl_err_name(worst));
        return worst == SL_OK ? SL_OK : status;
    }
#else
    (void)e;
#endif
    return status;
}

void sl_ens_result_free(sl_ens_result *r)
{
    if (r == NULL)
        return;
    free(r->inputs);
    free(r->outputs);
    free(r->status);
    free(r->store_buf);
    if (r->on_disk)
        (void)close(r->store_fd);
    memset(r, 0, sizeof *r);
}

/* Everything one run allocates, so one cleanup path frees it. */
typedef struct run_mem {
    int n_threads;
    void **ws;
    sl_rng *rng;       /* one generator per thread (Monte Carlo) */
    double *si;        /* n_threads x n_inputs */
    gsl_qrng *qrng;
    double *qu;        /* Sobol point */
    double *blk_in;    /* block x n_inputs (Sobol/grid, all members of the block) */
    double *lin, *lout;
    int *lst;
    char *lreason;
    double *gin, *gout; /* root: gathered block */
    int *gst;
    char *greason;
    char *gtext;        /* root: the block's formatted rows (format callback) */
    int *cnt, *displ;   /* MPI */
} run_mem;

static void run_mem_free(run_mem *rm, const sl_ens_model *m)
{
    if (rm->ws)
        for (int t = 0; t < rm->n_threads; t++)
            if (rm->ws[t] && m->ws_free)
                m->ws_free(rm->ws[t]);
    if (rm->qrng)
        gsl_qrng_free(rm->qrng);
    free(rm->ws);
    free(rm->rng);
    free(rm->si);
    free(rm->qu);
    free(rm->blk_in);
    free(rm->lin);
    free(rm->lout);
    free(rm->lst);
    free(rm->lreason);
    if (rm->gin != rm->lin)
        free(rm->gin);
    if (rm->gout != rm->lout)
        free(rm->gout);
    if (rm->gst != rm->lst)
        free(rm->gst);
    if (rm->greason != rm->lreason)
        free(rm->greason);
    free(rm->gtext);
    free(rm->cnt);
    free(rm->displ);
    memset(rm, 0, sizeof *rm);
}

/* Number of members of a block of COUNT starting at FIRST that rank R of
 * SIZE owns (member m belongs to rank m % size), and the block offset of its
 * first one. */
static size_t rank_share(size_t first, size_t count, int r, int size, size_t *i0)
{
    size_t s = (size_t)size;
    *i0 = ((size_t)r + s - first % s) % s;
    return count > *i0 ? (count - *i0 + s - 1) / s : 0;
}

/* Where member FIRST + I of a block of COUNT lies in the gathered block
 * (rank-major: rank k's members, in member order, after those of ranks
 * below k). */
static size_t gathered_slot(size_t first, size_t count, size_t i, int size)
{
    size_t k = (first + i) % (size_t)size, ki0, off = 0;
    for (size_t q = 0; q < k; q++)
        off += rank_share(first, count, (int)q, size, &ki0);
    rank_share(first, count, (int)k, size, &ki0);
    return off + (i - ki0) / (size_t)size;
}

/* Run one member into its slot. */
static void run_one(const sl_ens_plan *p, const sl_ens_model *m, void *ws, double *si,
                    const double *in, double *out, int *st, char *reason)
{
    size_t ni = p->n_inputs, no = m->n_outputs;
    for (size_t k = 0; k < ni; k++)
        si[k] = in[k] * p->inputs[k].to_si;
    sl_err me;
    sl_err_clear(&me);
    int rc = m->member(ws, m->ctx, p, si, out, &me);
    reason[0] = '\0';
    if (rc == SL_OK) {
        for (size_t j = 0; j < no; j++) {
            if (!isfinite(out[j]) && !(m->outputs[j].may_be_missing && isnan(out[j]))) {
                rc = SL_ENUMERIC;
                snprintf(reason, SL_ENS_REASON_LEN, "output %s is not finite",
                         m->outputs[j].name);
                break;
            }
        }
    } else {
        const char *msg = me.msg[0] ? me.msg : sl_err_name(rc);
        size_t len = strlen(msg);
        if (len > SL_ENS_REASON_LEN - 1)
            len = SL_ENS_REASON_LEN - 1;
        memcpy(reason, msg, len);
        reason[len] = '\0';
    }
    if (rc != SL_OK)
        for (size_t j = 0; j < no + m->n_extra; j++)
            out[j] = NAN;
    *st = rc;
}

#define SETUP_FAIL(code, ...)                                                \
    do {                                                                     \
        rc = sl_err_set(e, (code), __func__, __LINE__, __VA_ARGS__);         \
        goto setup_sync;                                                     \
    } while (0)

#define RUN_FAIL(code, ...)                                                  \
    do {                                                                     \
        rc = sl_err_set(e, (code), __func__, __LINE__, __VA_ARGS__);         \
        goto done;                                                           \
    } while (0)

int sl_ens_run(const sl_ens_plan *p, const sl_ens_model *m, const sl_ens_run_opts *o,
               sl_ens_result *r, sl_err *e)
{
    memset(r, 0, sizeof *r);
    run_mem rm;
    memset(&rm, 0, sizeof rm);
    int rc = SL_OK;
    int rank = 0, size = 1;
#ifdef SL_HAVE_MPI
    int mpi_init = 0;
    MPI_Initialized(&mpi_init);
    if (mpi_init) {
        MPI_Comm_rank(MPI_COMM_WORLD, &rank);
        MPI_Comm_size(MPI_COMM_WORLD, &size);
    }
#endif
    const size_t ni = p->n_inputs, no = m->n_outputs, n = p->n_members;
    const size_t nw = no + m->n_extra; /* per-member values: key outputs, then extras */
    const size_t B = o && o->block ? o->block : 256;
    int nt = o && o->n_threads > 0 ? o->n_threads : 1;
#ifdef _OPENMP
    if (!(o && o->n_threads > 0))
        nt = omp_get_max_threads();
#else
    nt = 1;
#endif
    rm.n_threads = nt;
    rm.ws = calloc((size_t)nt, sizeof *rm.ws);
    rm.rng = calloc((size_t)nt, sizeof *rm.rng);
    rm.si = malloc(((size_t)nt * ni + 1) * sizeof *rm.si);
    if (!rm.ws || !rm.rng || !rm.si)
        SETUP_FAIL(SL_ENOMEM, "out of memory for %d thread workspaces", nt);
    /* Workspaces and generators (rm.rng above): one per thread, made here, never in the loop. */
    for (int t = 0; t < nt; t++) {
        if (m->ws_new) {
            rm.ws[t] = m->ws_new(m->ctx, e);
            if (rm.ws[t] == NULL) {
                rc = e && e->code != SL_OK ? e->code : SL_ENOMEM;
                sl_err_push(e, rc, __func__, __LINE__);
                goto setup_sync;
            }
        }
    }
    if (p->mode == SL_ENS_SOBOL) {
        if (ni < 1 || ni > SL_ENS_SOBOL_MAX_DIM)
            SETUP_FAIL(SL_EUSAGE, "Sobol dimension %zu outside 1..%d", ni, (int)SL_ENS_SOBOL_MAX_DIM);
        rm.qrng = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)ni);
        rm.qu = malloc(ni * sizeof *rm.qu);
        if (!rm.qrng || !rm.qu)
            SETUP_FAIL(SL_ENOMEM, "cannot allocate the Sobol generator");
    }
    if (p->mode != SL_ENS_MONTE_CARLO) {
        rm.blk_in = malloc((B * ni + 1) * sizeof *rm.blk_in);
        if (!rm.blk_in)
            SETUP_FAIL(SL_ENOMEM, "out of memory for a block of inputs");
    }
    size_t lcap = B / (size_t)size + 1;
    rm.lin = malloc((lcap * ni + 1) * sizeof *rm.lin);
    rm.lout = malloc((lcap * nw + 1) * sizeof *rm.lout);
    rm.lst = malloc(lcap * sizeof *rm.lst);
    rm.lreason = malloc(lcap * SL_ENS_REASON_LEN);
    if (!rm.lin || !rm.lout || !rm.lst || !rm.lreason)
        SETUP_FAIL(SL_ENOMEM, "out of memory for a block of members");
    if (size == 1) {
        rm.gin = rm.lin;
        rm.gout = rm.lout;
        rm.gst = rm.lst;
        rm.greason = rm.lreason;
    } else if (rank == 0) {
        rm.gin = malloc((B * ni + 1) * sizeof *rm.gin);
        rm.gout = malloc((B * nw + 1) * sizeof *rm.gout);
        rm.gst = malloc(B * sizeof *rm.gst);
        rm.greason = malloc(B * SL_ENS_REASON_LEN);
        rm.cnt = malloc((size_t)size * sizeof *rm.cnt);
        rm.displ = malloc((size_t)size * sizeof *rm.displ);
        if (!rm.gin || !rm.gout || !rm.gst || !rm.greason || !rm.cnt || !rm.displ)
            SETUP_FAIL(SL_ENOMEM, "out of memory for the gathered block");
    }
    if (rank == 0 && o && o->format) {
        rm.gtext = malloc(B * (o->format_cap + 1));
        if (!rm.gtext)
            SETUP_FAIL(SL_ENOMEM, "out of memory for the text of a block");
    }
    if (rank == 0) {
        if (n > (size_t)-1 / sizeof(double) / (ni + no + 1))
            SETUP_FAIL(SL_ENOMEM, "%zu members are too many for memory", n);
        r->n_members = n;
        r->n_inputs = ni;
        r->n_outputs = no;
        r->status = malloc(n * sizeof *r->status);
        if (!r->status)
            SETUP_FAIL(SL_ENOMEM, "out of memory keeping the status of %zu members", n);
        if (o && o->store_dir) {
            rc = store_open(r, o->store_dir, e);
            if (rc != SL_OK)
                goto setup_sync;
        } else {
            r->inputs = malloc((n * ni + 1) * sizeof *r->inputs);
            r->outputs = malloc((n * no + 1) * sizeof *r->outputs);
            if (!r->inputs || !r->outputs)
                SETUP_FAIL(SL_ENOMEM, "out of memory keeping the scalars of %zu members", n);
        }
    }
    r->mpi_ranks = size;
    r->threads = nt;

setup_sync:
#ifdef SL_HAVE_MPI
    if (size > 1) {
        int ok = rc == SL_OK, all = 0;
        MPI_Allreduce(&ok, &all, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
        if (!all && rc == SL_OK)
            rc = sl_err_set(e, SL_EINTERNAL, __func__, __LINE__,
                            "another MPI rank could not set up its workspaces");
    }
#endif
    if (rc != SL_OK)
        goto done;

    sl_ens_progress pg;
    sl_ens_progress_start(&pg, n, rank == 0 && o && o->progress);
    double t0 = now_s();
    for (size_t first = 0; first < n; first += B) {
        size_t count = n - first < B ? n - first : B;
        /* Sobol points are sequential: every rank generates the block's points
         * in member order; grid points are computed from the index. */
        if (p->mode == SL_ENS_SOBOL) {
            for (size_t i = 0; i < count; i++) {
                rc = sample_sobol_next(p, rm.qrng, rm.qu, rm.blk_in + i * ni, e);
                if (rc != SL_OK)
                    goto done;
            }
        } else if (p->mode == SL_ENS_GRID) {
            for (size_t i = 0; i < count; i++)
                sample_grid(p, first + i, rm.blk_in + i * ni);
        }
        size_t i0 = 0;
        size_t nl = rank_share(first, count, rank, size, &i0);
        const sl_ens_plan *pp = p;
        const sl_ens_model *mm = m;
        run_mem *rmp = &rm;
        const size_t stride = (size_t)size;
#pragma omp parallel for schedule(dynamic, 1) num_threads(nt) default(none) \
    shared(pp, mm, rmp, nl, i0, first, stride, ni, nw)
        for (size_t li = 0; li < nl; li++) {
            int t = 0;
#ifdef _OPENMP
            t = omp_get_thread_num();
#endif
            size_t i = i0 + li * stride;
            double *in = rmp->lin + li * ni;
            if (pp->mode == SL_ENS_MONTE_CARLO)
                sample_mc(pp, &rmp->rng[t], first + i, in);
            else
                memcpy(in, rmp->blk_in + i * ni, ni * sizeof *in);
            run_one(pp, mm, rmp->ws[t], rmp->si + (size_t)t * ni, in, rmp->lout + li * nw,
                    &rmp->lst[li], rmp->lreason + li * SL_ENS_REASON_LEN);
        }
#ifdef SL_HAVE_MPI
        if (size > 1) {
            /* Gather rank-major: rank k's members, in member order, at displ[k]. */
            int mult[4] = {(int)ni, (int)nw, 1, SL_ENS_REASON_LEN};
            void *sendb[4] = {rm.lin, rm.lout, rm.lst, rm.lreason};
            void *recvb[4] = {rm.gin, rm.gout, rm.gst, rm.greason};
            MPI_Datatype ty[4] = {MPI_DOUBLE, MPI_DOUBLE, MPI_INT, MPI_CHAR};
            for (int a = 0; a < 4; a++) {
                if (rank == 0) {
                    int off = 0;
                    for (int k = 0; k < size; k++) {
                        size_t ki0;
                        rm.cnt[k] = (int)rank_share(first, count, k, size, &ki0) * mult[a];
                        rm.displ[k] = off;
                        off += rm.cnt[k];
                    }
                }
                MPI_Gatherv(sendb[a], (int)nl * mult[a], ty[a], recvb[a], rm.cnt, rm.displ, ty[a], 0,
                            MPI_COMM_WORLD);
            }
        }
#endif
        int go_on = 1;
        if (rank == 0 && rm.gtext) {
            /* The rows' text, each thread its own members and slots. */
            const sl_ens_run_opts *oo = o;
#pragma omp parallel for schedule(static) num_threads(nt) default(none) \
    shared(oo, rmp, first, count, size, ni, nw)
            for (size_t i = 0; i < count; i++) {
                size_t g = gathered_slot(first, count, i, size);
                size_t cap = oo->format_cap + 1;
                oo->format(oo->sink, first + i, rmp->gin + g * ni, rmp->gout + g * nw, rmp->gst[g],
                           rmp->greason + g * SL_ENS_REASON_LEN, rmp->gtext + i * cap, cap);
            }
        }
        if (rank == 0) {
            /* Serial, in member order: keep scalars, stream rows. */
            for (size_t i = 0; i < count && rc == SL_OK; i++) {
                size_t g = gathered_slot(first, count, i, size);
                const double *in = rm.gin + g * ni;
                const double *out = rm.gout + g * nw;
                int st = rm.gst[g];
                const char *reason = rm.greason + g * SL_ENS_REASON_LEN;
                size_t mi = first + i;
                rc = store_put(r, mi, in, out, e);
                r->status[mi] = st;
                if (st != SL_OK) {
                    if (r->n_failed == 0) {
                        snprintf(r->first_failure, sizeof r->first_failure, "%s", reason);
                        r->first_failed_member = mi;
                    }
                    r->n_failed++;
                }
                if (rc == SL_OK && o && o->row)
                    rc = o->row(o->sink, mi, in, out, st, reason,
                                rm.gtext ? rm.gtext + i * (o->format_cap + 1) : NULL, e);
            }
            go_on = rc == SL_OK;
            sl_ens_progress_update(&pg, first + count);
        }
#ifdef SL_HAVE_MPI
        if (size > 1)
            MPI_Bcast(&go_on, 1, MPI_INT, 0, MPI_COMM_WORLD);
#endif
        if (!go_on) {
            if (rc == SL_OK)
                RUN_FAIL(SL_EIO, "rank 0 stopped the run (writing its output failed)");
            goto done;
        }
    }
    sl_ens_progress_end(&pg);
    if (rank == 0 && (rc = store_flush(r, e)) != SL_OK)
        goto done;
    r->wall_s = now_s() - t0;
    if (rank != 0)
        r->n_members = 0;
done:
    run_mem_free(&rm, m);
    if (rc != SL_OK) {
        int ranks = r->mpi_ranks;
        sl_ens_result_free(r);
        r->mpi_ranks = ranks;
    }
    return rc;
}

/* ================================================================ statistics */

/* A column of N doubles (at least one element). */
static double *column_alloc(size_t n, sl_err *e)
{
    double *b = malloc((n + 1) * sizeof *b);
    if (b == NULL)
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory for a column of %zu members", n);
    return b;
}

/* BUF = output j of the successful members whose value is finite, in member
 * order; returns their number. */
static int gather_ok(const sl_ens_result *r, size_t j, double *buf, size_t *n_ok, sl_err *e)
{
    SL_TRY_RETURN(e, sl_ens_column(r, r->n_inputs + j, buf, e));
    size_t k = 0;
    for (size_t m = 0; m < r->n_members; m++)
        if (r->status[m] == SL_OK && isfinite(buf[m]))
            buf[k++] = buf[m];
    *n_ok = k;
    return SL_OK;
}

int sl_ens_percentiles(const sl_ens_result *r, size_t j, const double *pct, size_t np,
                       double *vals, size_t *n_ok, sl_err *e)
{
    for (size_t k = 0; k < np; k++)
        if (!(pct[k] >= 0 && pct[k] <= 100))
            SL_FAIL_RETURN(e, SL_EUSAGE, "percentile %g is outside 0..100", pct[k]);
    double *buf = column_alloc(r->n_members, e);
    if (buf == NULL)
        return SL_ENOMEM;
    size_t n = 0;
    int rc = gather_ok(r, j, buf, &n, e);
    if (rc == SL_OK)
        rc = sl_sort_doubles(buf, n, e);
    if (rc == SL_OK) {
        for (size_t k = 0; k < np; k++)
            vals[k] = n ? gsl_stats_quantile_from_sorted_data(buf, 1, n, pct[k] / 100.0) : NAN;
        *n_ok = n;
    }
    free(buf);
    return rc;
}

int sl_ens_mean_sd(const sl_ens_result *r, size_t j, double *mean, double *sd, size_t *n_ok, sl_err *e)
{
    double *y = column_alloc(r->n_members, e);
    if (y == NULL)
        return SL_ENOMEM;
    size_t n = 0;
    int rc = gather_ok(r, j, y, &n, e);
    if (rc == SL_OK) {
        double s = 0;
        for (size_t k = 0; k < n; k++)
            s += y[k];
        double mu = n ? s / (double)n : NAN, ss = 0;
        for (size_t k = 0; k < n; k++) {
            double d = y[k] - mu;
            ss += d * d;
        }
        *mean = mu;
        *sd = n > 1 ? sqrt(ss / (double)(n - 1)) : NAN;
        *n_ok = n;
    }
    free(y);
    return rc;
}

int sl_ens_parse_threshold(const char *spec, sl_ens_threshold *t, sl_err *e)
{
    const char *form = "NAME>VALUE, NAME>=VALUE, NAME<VALUE or NAME<=VALUE";
    const char *o = strpbrk(spec, "<>");
    if (o == NULL || o == spec)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--exceed '%s': expected %s", spec, form);
    size_t nl = (size_t)(o - spec);
    while (nl > 0 && isspace((unsigned char)spec[nl - 1]))
        nl--;
    if (nl == 0 || nl >= sizeof t->name)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--exceed '%s': expected %s", spec, form);
    memcpy(t->name, spec, nl);
    t->name[nl] = '\0';
    const char *v = o + 1;
    if (*v == '=') {
        t->op = *o == '>' ? 'g' : 'l';
        v++;
    } else {
        t->op = *o;
    }
    char *end = NULL;
    errno = 0;
    t->value = strtod(v, &end);
    if (end == v || errno == ERANGE || !isfinite(t->value))
        SL_FAIL_RETURN(e, SL_EUSAGE, "--exceed '%s': '%s' is not a finite number", spec, v);
    while (isspace((unsigned char)*end))
        end++;
    if (*end != '\0')
        SL_FAIL_RETURN(e, SL_EUSAGE, "--exceed '%s': unexpected '%s'", spec, end);
    return SL_OK;
}

int sl_ens_exceedance(const sl_ens_result *r, size_t j, const sl_ens_threshold *t, double *p,
                      double *stderr_p, size_t *n_ok, sl_err *e)
{
    double *y = column_alloc(r->n_members, e);
    if (y == NULL)
        return SL_ENOMEM;
    size_t n = 0, k = 0;
    int rc = gather_ok(r, j, y, &n, e);
    if (rc == SL_OK) {
        for (size_t q = 0; q < n; q++) {
            double x = y[q];
            int hit = t->op == '>' ? x > t->value
                      : t->op == 'g' ? x >= t->value
                      : t->op == '<' ? x < t->value
                                     : x <= t->value;
            k += (size_t)hit;
        }
        *n_ok = n;
        *p = n ? (double)k / (double)n : NAN;
        *stderr_p = n ? sqrt(*p * (1 - *p) / (double)n) : NAN;
    }
    free(y);
    return rc;
}

/* X = input i and Y = output j of the members the statistics of output j
 * use (successful, finite output), in member order; *N their number.  X and
 * Y hold n_members each. */
static int gather_pair(const sl_ens_result *r, size_t i, size_t j, double *x, double *y, size_t *n, sl_err *e)
{
    SL_TRY_RETURN(e, sl_ens_column(r, i, x, e));
    SL_TRY_RETURN(e, sl_ens_column(r, r->n_inputs + j, y, e));
    size_t k = 0;
    for (size_t m = 0; m < r->n_members; m++) {
        if (r->status[m] != SL_OK || !isfinite(y[m]))
            continue;
        x[k] = x[m];
        y[k] = y[m];
        k++;
    }
    *n = k;
    return SL_OK;
}

int sl_ens_spearman(const sl_ens_result *r, size_t i, size_t j, double *rho, sl_err *e)
{
    size_t nm = r->n_members;
    double *buf = malloc((4 * nm + 1) * sizeof *buf);
    if (buf == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory ranking %zu members", nm);
    double *x = buf, *y = buf + nm, *w = buf + 2 * nm;
    size_t n = 0;
    int rc = gather_pair(r, i, j, x, y, &n, e);
    if (rc == SL_OK) {
        int xconst = 1, yconst = 1;
        for (size_t k = 1; k < n; k++) {
            xconst &= x[k] == x[0];
            yconst &= y[k] == y[0];
        }
        *rho = (n < 3 || xconst || yconst) ? NAN : gsl_stats_spearman(x, 1, y, 1, n, w);
    }
    free(buf);
    return rc;
}

int sl_ens_first_order(const sl_ens_result *r, size_t i, size_t j, double *s1, sl_err *e)
{
    size_t nm = r->n_members;
    *s1 = NAN;
    double *x = malloc((2 * nm + 1) * sizeof *x);
    size_t *ord = malloc((nm + 1) * sizeof *ord);
    if (x == NULL || ord == NULL) {
        free(x);
        free(ord);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory ranking %zu members", nm);
    }
    double *y = x + nm;
    size_t n = 0;
    int rc = gather_pair(r, i, j, x, y, &n, e);
    if (rc == SL_OK && n >= 20) {
        double mean = 0, var = 0;
        for (size_t k = 0; k < n; k++)
            mean += y[k];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            var += (y[k] - mean) * (y[k] - mean);
        if (var > 0) {
            gsl_sort_index(ord, x, 1, n);
            size_t nclass = (size_t)floor(sqrt((double)n)), used = 0;
            double between = 0;
            size_t start = 0;
            for (size_t c = 1; start < n; c++) {
                size_t end = c >= nclass ? n : (size_t)((double)c * (double)n / (double)nclass);
                if (end <= start)
                    end = start + 1;
                /* Keep equal input values (choice, grids) in one class. */
                while (end < n && x[ord[end]] == x[ord[end - 1]])
                    end++;
                double cm = 0;
                for (size_t k = start; k < end; k++)
                    cm += y[ord[k]];
                cm /= (double)(end - start);
                between += (double)(end - start) * (cm - mean) * (cm - mean);
                used++;
                start = end;
            }
            double raw = between / var;
            double b = (double)(used - 1) / (double)(n - 1);
            *s1 = used > 1 ? (raw - b) / (1 - b) : NAN; /* one class: a constant input */
        }
    }
    free(x);
    free(ord);
    return rc;
}

/* The sort space is two columns of doubles: a (value, member) pair fits in
 * two doubles. */
_Static_assert(sizeof(sl_sort_pair) <= 2 * sizeof(double), "the sort space is two columns of doubles");

/* ORDER[0..ns-1] = the ns members m with IN[m] (all n members when IN is
 * NULL) sorted by their value COL[m], ties by member (a stable sort of pairs
 * laid out in member order: a total order, so the result does not depend on
 * the sort algorithm).  The sort space WORK is two columns of doubles whose
 * first column is COL: the values are compacted to the front in member
 * order, then spread to (value, member) pairs from the back (pair k fills
 * doubles 2k and 2k+1, all at or above k and read already), so the pairs
 * need no column of their own; COL is overwritten.  The sort itself takes a
 * scratch copy of the pairs while it runs (src/sort.c). */
static int sort_members(sl_sort_pair *work, double *col, const unsigned char *in, size_t n, uint32_t *order,
                        sl_err *e)
{
    size_t ns = n;
    if (in) {
        ns = 0;
        for (size_t m = 0; m < n; m++)
            if (in[m])
                col[ns++] = col[m];
    }
    size_t k = ns;
    for (size_t m = n; m-- > 0 && k > 0;) {
        if (in && !in[m])
            continue;
        k--;
        double v = col[k];
        work[k].value = v;
        work[k].member = (uint32_t)m;
    }
    SL_TRY_RETURN(e, sl_sort_pairs(work, ns, e));
    for (k = 0; k < ns; k++)
        order[k] = work[k].member;
    return SL_OK;
}

/* Twice the average ranks (1-based) of the NS members listed in ORDERED
 * (sorted by value VAL[member]), written to RANK2[member]; ties share their
 * mean rank.  Twice the rank is an integer (at most 2 ns + 1), so half of it
 * as a double is the mean rank exactly. */
static void average_ranks(const uint32_t *ordered, size_t ns, const double *val, uint32_t *rank2)
{
    size_t a = 0;
    while (a < ns) {
        size_t b = a + 1;
        while (b < ns && val[ordered[b]] == val[ordered[a]])
            b++;
        uint32_t twice = (uint32_t)(a + 1 + b); /* twice the mean of a+1 .. b */
        for (size_t k = a; k < b; k++)
            rank2[ordered[k]] = twice;
        a = b;
    }
}

/* The sorted order of each input over all members: in memory (MEM, n_inputs
 * x n), or in the column store after the columns. */
typedef struct input_orders {
    const sl_ens_result *r;
    uint32_t *mem;
    off_t base;
} input_orders;

static int orders_put(const input_orders *o, size_t i, const uint32_t *ord, sl_err *e)
{
    size_t n = o->r->n_members;
    if (o->mem) {
        memcpy(o->mem + i * n, ord, n * sizeof *ord);
        return SL_OK;
    }
    if (write_all(o->r->store_fd, ord, n * sizeof *ord, o->base + (off_t)(i * n * sizeof *ord)) != 0)
        SL_FAIL_RETURN(e, SL_EIO, "writing the member store: %s", strerror(errno));
    return SL_OK;
}

static int orders_get(const input_orders *o, size_t i, uint32_t *ord, sl_err *e)
{
    size_t n = o->r->n_members;
    if (o->mem) {
        memcpy(ord, o->mem + i * n, n * sizeof *ord);
        return SL_OK;
    }
    if (read_all(o->r->store_fd, ord, n * sizeof *ord, o->base + (off_t)(i * n * sizeof *ord)) != 0)
        SL_FAIL_RETURN(e, SL_EIO, "reading the member store: %s", strerror(errno));
    return SL_OK;
}

/* rho and s1 of output j (column YC, the N members m with IN[m], NS of
 * them, with twice-ranks RY2) and input i (column XC; FORD its order over
 * those members). */
static void pair_measures(const double *xc, const double *yc, const unsigned char *in, size_t n,
                          const uint32_t *ford, size_t ns, double mean, double var, int yconst, const uint32_t *ry2,
                          uint32_t *rx2, double *rho, double *s1)
{
    int xconst = xc[ford[0]] == xc[ford[ns - 1]];
    double mr = 0.5 * (double)(ns + 1);
    if (rho && !xconst && !yconst) {
        average_ranks(ford, ns, xc, rx2);
        double sxy = 0, sxx = 0, syy = 0;
        for (size_t m = 0; m < n; m++) {
            if (!in[m])
                continue;
            double dx = 0.5 * (double)rx2[m] - mr, dy = 0.5 * (double)ry2[m] - mr;
            sxy += dx * dy;
            sxx += dx * dx;
            syy += dy * dy;
        }
        *rho = sxy / sqrt(sxx * syy);
    }
    /* First-order share: classes of equal count along this order. */
    if (s1 && ns >= 20 && var > 0 && !xconst) {
        size_t nclass = (size_t)floor(sqrt((double)ns)), used = 0, start = 0;
        double between = 0;
        for (size_t c = 1; start < ns; c++) {
            size_t end = c >= nclass ? ns : (size_t)((double)c * (double)ns / (double)nclass);
            if (end <= start)
                end = start + 1;
            while (end < ns && xc[ford[end]] == xc[ford[end - 1]])
                end++;
            double cm = 0;
            for (size_t k = start; k < end; k++)
                cm += yc[ford[k]];
            cm /= (double)(end - start);
            between += (double)(end - start) * (cm - mean) * (cm - mean);
            used++;
            start = end;
        }
        double b = (double)(used - 1) / (double)(ns - 1);
        *s1 = used > 1 ? (between / var - b) / (1 - b) : NAN;
    }
}

int sl_ens_sensitivity(const sl_ens_result *r, double *rho, double *s1, sl_err *e)
{
    size_t n = r->n_members, ni = r->n_inputs, no = r->n_outputs;
    for (size_t q = 0; q < ni * no; q++) {
        if (rho)
            rho[q] = NAN;
        if (s1)
            s1[q] = NAN;
    }
    if (n == 0 || ni == 0 || no == 0)
        return SL_OK;
    if (n > UINT32_MAX / 2)
        SL_FAIL_RETURN(e, SL_EUSAGE, "%zu members: the rank statistics take at most %" PRIu32, n,
                       UINT32_MAX / 2);
    /* Per member: the input and the output column, which are also the sort
     * space (16 bytes), two twice-rank columns (8), an order (4), a flag (1);
     * plus 4 per input when the orders stay in memory. */
    input_orders io = {r, NULL, (off_t)((ni + no) * n * sizeof(double))};
    double *xy = malloc(2 * n * sizeof *xy);
    uint32_t *r2 = malloc(2 * n * sizeof *r2), *ford = malloc(n * sizeof *ford);
    unsigned char *in = malloc(n);
    if (!r->on_disk)
        io.mem = malloc(ni * n * sizeof *io.mem);
    int rc = SL_OK;
    if (!xy || !r2 || !ford || !in || (!r->on_disk && !io.mem)) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory ranking %zu members", n);
        goto out;
    }
    sl_sort_pair *work = (sl_sort_pair *)(void *)xy;
    double *xc = xy, *yc = xy + n;
    uint32_t *ry2 = r2, *rx2 = r2 + n;
    /* Each input sorted once over all members. */
    for (size_t i = 0; i < ni && rc == SL_OK; i++) {
        rc = sl_ens_column(r, i, xc, e);
        if (rc == SL_OK)
            rc = sort_members(work, xc, NULL, n, ford, e);
        if (rc == SL_OK)
            rc = orders_put(&io, i, ford, e);
    }
    for (size_t j = 0; j < no && rc == SL_OK; j++) {
        /* The members this output's statistics use, then their order by the
         * output (FORD holds it here); the sort uses up the column. */
        rc = sl_ens_column(r, ni + j, xc, e);
        if (rc != SL_OK)
            break;
        size_t ns = 0;
        for (size_t m = 0; m < n; m++) {
            in[m] = r->status[m] == SL_OK && isfinite(xc[m]);
            ns += in[m];
        }
        if (ns < 3)
            continue;
        rc = sort_members(work, xc, in, n, ford, e);
        if (rc == SL_OK)
            rc = sl_ens_column(r, ni + j, yc, e);
        if (rc != SL_OK)
            break;
        double mean = 0, var = 0;
        for (size_t m = 0; m < n; m++)
            if (in[m])
                mean += yc[m];
        mean /= (double)ns;
        for (size_t m = 0; m < n; m++) {
            if (!in[m])
                continue;
            double d = yc[m] - mean;
            var += d * d;
        }
        average_ranks(ford, ns, yc, ry2);
        int yconst = yc[ford[0]] == yc[ford[ns - 1]];
        for (size_t i = 0; i < ni && rc == SL_OK; i++) {
            rc = sl_ens_column(r, i, xc, e);
            if (rc == SL_OK)
                rc = orders_get(&io, i, ford, e);
            if (rc != SL_OK)
                break;
            /* This input's order restricted to the subset (in place). */
            size_t nf = 0;
            for (size_t k = 0; k < n; k++)
                if (in[ford[k]])
                    ford[nf++] = ford[k];
            pair_measures(xc, yc, in, n, ford, ns, mean, var, yconst, ry2, rx2, rho ? &rho[j * ni + i] : NULL,
                          s1 ? &s1[j * ni + i] : NULL);
        }
    }
out:
    free(xy);
    free(r2);
    free(ford);
    free(in);
    free(io.mem);
    return rc;
}

/* ================================================================ progress bar */

void sl_ens_progress_start(sl_ens_progress *pg, size_t total, int enable)
{
    pg->enabled = enable != 0;
    pg->total = total;
    pg->start_s = now_s();
    pg->last_draw_s = -1;
}

void sl_ens_progress_update(sl_ens_progress *pg, size_t done)
{
    if (!pg->enabled)
        return;
    double t = now_s();
    if (done < pg->total && pg->last_draw_s >= 0 && t - pg->last_draw_s < 0.1)
        return;
    pg->last_draw_s = t;
    double el = t - pg->start_s;
    double frac = pg->total ? (double)done / (double)pg->total : 1.0;
    double rate = el > 0 ? (double)done / el : 0;
    double left = rate > 0 ? (double)(pg->total - done) / rate : 0;
    char bar[31];
    int fill = (int)(frac * 30.0);
    for (int k = 0; k < 30; k++)
        bar[k] = k < fill ? '#' : '.';
    bar[30] = '\0';
    long ls = (long)(left + 0.5);
    fprintf(stderr, "\r[%s] %3d%%  %zu/%zu  %.1f/s  left %ld:%02ld:%02ld ", bar,
            (int)(frac * 100.0), done, pg->total, rate, ls / 3600, (ls / 60) % 60, ls % 60);
    fflush(stderr);
}

void sl_ens_progress_end(sl_ens_progress *pg)
{
    if (pg->enabled && pg->last_draw_s >= 0) {
        fputc('\n', stderr);
        fflush(stderr);
    }
    pg->enabled = 0;
}
