/* Regression tests for what fuzzing and the hardening audit (issue 17) found
 * in the input readers and the output discipline: each test is one input
 * that once crashed, ran away or was misread, and the answer it must get now
 * (a clean status with a message naming the file, the variable or line, and
 * the rule).  The rules are those of include/steamloft/infile.h and
 * include/steamloft/outfile.h. */
#include "sl_test.h"
#include "steamloft/atmosphere.h"
#include "steamloft/dist.h"
#include "steamloft/infile.h"
#include "steamloft/injection.h"
#include "steamloft/outfile.h"
#include "steamloft/scenario.h"

#include <fcntl.h>
#include <netcdf.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static void tmp_path(char *buf, size_t cap, const char *name)
{
    snprintf(buf, cap, "%s/sl_fzr_%ld_%s", getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp",
             (long)getpid(), name);
}

static void write_bytes(const char *path, const char *text, size_t n)
{
    FILE *f = fopen(path, "wb");
    ck_assert_ptr_nonnull(f);
    ck_assert_uint_eq(fwrite(text, 1, n, f), n);
    ck_assert_int_eq(fclose(f), 0);
}

#define NC_OK(call) ck_assert_int_eq((call), NC_NOERR)

/* An injection file whose altitude coordinate lies on ALT_DIM_LEN values of
 * another dimension (or is 2-D when TWO_D): once a heap overflow in
 * read_netcdf, which sized its buffer by the altitude dimension (2 bands). */
static void write_bad_altitude(const char *path, size_t alt_dim_len, int two_d)
{
    int nc, d_alt, d_nv, d_long, v_z, v_b, v_m;
    NC_OK(nc_create(path, NC_CLOBBER, &nc));
    NC_OK(nc_def_dim(nc, "altitude", 2, &d_alt));
    NC_OK(nc_def_dim(nc, "nv", 2, &d_nv));
    NC_OK(nc_def_dim(nc, "longer", alt_dim_len, &d_long));
    int zdims[2] = {two_d ? d_alt : d_long, d_nv}, bdims[2] = {d_alt, d_nv};
    NC_OK(nc_def_var(nc, "altitude", NC_DOUBLE, two_d ? 2 : 1, zdims, &v_z));
    NC_OK(nc_put_att_text(nc, v_z, "units", 1, "m"));
    NC_OK(nc_put_att_text(nc, v_z, "bounds", 13, "altitude_bnds"));
    NC_OK(nc_def_var(nc, "altitude_bnds", NC_DOUBLE, 2, bdims, &v_b));
    NC_OK(nc_def_var(nc, "vapor_mass", NC_DOUBLE, 1, &d_alt, &v_m));
    NC_OK(nc_put_att_text(nc, v_m, "units", 2, "kg"));
    NC_OK(nc_enddef(nc));
    double z[64], b[4] = {0, 1000, 1000, 2000}, m[2] = {1, 2};
    for (int i = 0; i < 64; i++)
        z[i] = 500.0 + i;
    NC_OK(nc_put_var_double(nc, v_z, z));
    NC_OK(nc_put_var_double(nc, v_b, b));
    NC_OK(nc_put_var_double(nc, v_m, m));
    NC_OK(nc_close(nc));
}

START_TEST(injection_nc_altitude_on_a_longer_dimension)
{
    char p[256];
    tmp_path(p, sizeof p, "altlong.nc");
    write_bad_altitude(p, 50, 0);
    sl_injection inj;
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "netCDF variable altitude"));
    ck_assert_ptr_nonnull(strstr(e.msg, "altitude(altitude)"));
    unlink(p);
}
END_TEST

START_TEST(injection_nc_altitude_2d)
{
    char p[256];
    tmp_path(p, sizeof p, "alt2d.nc");
    write_bad_altitude(p, 3, 1);
    sl_injection inj;
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "2 dimensions"));
    unlink(p);
}
END_TEST

/* A valid classic file with one byte of the header changed: the dimension
 * count (bytes 12-15 after "CDF\1", numrecs and the NC_DIMENSION tag) made
 * huge, and a copy cut short so that a variable's data cannot be there.
 * libnetcdf took gigabytes on such files; the precheck refuses them. */
START_TEST(damaged_classic_header_refused_before_the_library)
{
    char p[256];
    tmp_path(p, sizeof p, "damaged.nc");
    write_bad_altitude(p, 2, 0);
    FILE *f = fopen(p, "r+b");
    ck_assert_ptr_nonnull(f);
    unsigned char huge[4] = {0x7f, 0xff, 0xff, 0xf0};
    ck_assert_int_eq(fseek(f, 12, SEEK_SET), 0);
    ck_assert_uint_eq(fwrite(huge, 1, 4, f), 4);
    ck_assert_int_eq(fclose(f), 0);
    sl_err e = {0};
    ck_assert_int_eq(sl_infile_nc_precheck(p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "damaged netCDF file"));
    ck_assert_ptr_nonnull(strstr(e.msg, "does not fit"));
    sl_injection inj;
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);

    write_bad_altitude(p, 2, 0);
    struct stat st;
    ck_assert_int_eq(stat(p, &st), 0);
    ck_assert_int_eq(truncate(p, st.st_size - 24), 0);
    ck_assert_int_eq(sl_infile_nc_precheck(p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "does not fit in the file"));
    /* The intact file passes the precheck. */
    write_bad_altitude(p, 2, 0);
    ck_assert_int_eq(sl_infile_nc_precheck(p, &e), SL_OK);
    unlink(p);
}
END_TEST

START_TEST(numbers_are_decimal_only)
{
    static const struct {
        const char *text;
        double want;
    } good[] = {{"1500", 1500}, {"-2.5", -2.5}, {"3e-6", 3e-6}, {".5", 0.5}, {" 7 ", 7},
                {"+4.", 4}, {"1E3", 1000}};
    static const char *const bad[] = {"0xC8", "0x1p3", "inf", "-inf", "nan", "NaN", "infinity",
                                      "1e999", "", " ", "1.5x", "+", "e5", "1e", ".", "1,5",
                                      "1 2", "--1"};
    double v;
    for (size_t i = 0; i < sizeof good / sizeof good[0]; i++) {
        ck_assert_msg(sl_infile_parse_double(good[i].text, &v) == 0, "'%s' refused", good[i].text);
        ck_assert(v == good[i].want);
    }
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        ck_assert_msg(sl_infile_parse_double(bad[i], &v) != 0, "'%s' accepted", bad[i]);
}
END_TEST

/* Once refused with a misleading message (BOM), or as an unknown key ('='
 * in a prose comment). */
START_TEST(injection_csv_bom_crlf_and_prose_comment)
{
    char p[256];
    tmp_path(p, sizeof p, "bom.csv");
    static const char text[] = "\xEF\xBB\xBF# a note: 1 Tg = 1e9 kg, remember\r\n"
                               "# latitude_deg = 12.5\r\n"
                               "bottom_km,top_km,vapor_Tg\r\n"
                               "18,19,1.5\r\n"
                               "19,20,0.5\r\n";
    write_bytes(p, text, sizeof text - 1);
    sl_injection inj;
    sl_err e = {0};
    ck_assert_msg(sl_injection_read(&inj, p, &e) == SL_OK, "%s", e.msg);
    ck_assert_uint_eq(inj.n_bands, 2);
    ck_assert(inj.latitude_deg == 12.5);
    SL_CK_REL(sl_injection_total_vapor_kg(&inj), 2.0e9, 1e-15); /* exact sum of the file's rows */
    sl_injection_free(&inj);
    /* A metadata-shaped key that is not one is still refused (a typo guard). */
    static const char typo[] = "# latitude_dg = 12.5\nbottom_km,top_km,vapor_Tg\n18,19,1\n";
    write_bytes(p, typo, sizeof typo - 1);
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, ":1: unknown metadata key 'latitude_dg'"));
    /* Hex is not a number. */
    static const char hex[] = "bottom_km,top_km,vapor_Tg\n18,19,0xC8\n";
    write_bytes(p, hex, sizeof hex - 1);
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, ":2: column 3 (vapor)"));
    unlink(p);
}
END_TEST

START_TEST(atmosphere_text_bom_crlf)
{
    char p[256];
    tmp_path(p, sizeof p, "bom.txt");
    static const char text[] = "\xEF\xBB\xBF# name: bom test\r\n"
                               "# columns: altitude_m temperature_K pressure_Pa\r\n"
                               "0 288.15 101325\r\n"
                               "1000 281.65 89874.6\r\n"
                               "2000 275.15 79495.2\r\n";
    write_bytes(p, text, sizeof text - 1);
    sl_atmosphere atm;
    sl_err e = {0};
    memset(&atm, 0, sizeof atm);
    ck_assert_msg(sl_atmosphere_init(&atm, p, &e) == SL_OK, "%s", e.msg);
    ck_assert(atm.n >= 3);
    ck_assert(atm.temperature_K[0] == 288.15);
    sl_atmosphere_free(&atm);
    unlink(p);
}
END_TEST

START_TEST(text_size_cap_and_directory)
{
    char p[256];
    tmp_path(p, sizeof p, "huge.csv");
    int fd = open(p, O_WRONLY | O_CREAT | O_TRUNC, 0600);
    ck_assert_int_ge(fd, 0);
    ck_assert_int_eq(ftruncate(fd, (off_t)SL_INFILE_MAX_BYTES + 10), 0);
    close(fd);
    sl_injection inj;
    sl_err e = {0};
    ck_assert_int_eq(sl_injection_read(&inj, p, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "larger than the limit of 16777216 bytes"));
    unlink(p);
    /* A directory is bad input (exit 66), not an I/O error (exit 74). */
    const char *dir = getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp";
    ck_assert_int_eq(sl_injection_read(&inj, dir, &e), SL_ENOINPUT);
    ck_assert_ptr_nonnull(strstr(e.msg, "is a directory"));
}
END_TEST

/* Lines over 196 characters were refused even when the excess was a
 * comment or a CR. */
START_TEST(scenario_line_rule_ignores_comments)
{
    char text[1600];
    char comment[600];
    memset(comment, 'c', sizeof comment - 1);
    comment[sizeof comment - 1] = '\0';
    snprintf(text, sizeof text, "; %s\r\n[impactor]\r\ndiameter_m = 300 ; %s\r\n", comment, comment);
    sl_scenario *sc = malloc(sizeof *sc);
    ck_assert_ptr_nonnull(sc);
    sl_err e = {0};
    ck_assert_msg(sl_scenario_read_string(sc, "long.ini", text, &e) == SL_OK, "%s", e.msg);
    char longval[300];
    memset(longval, '1', 250);
    longval[250] = '\0';
    snprintf(text, sizeof text, "[impactor]\ndiameter_m = %s\n", longval);
    ck_assert_int_eq(sl_scenario_read_string(sc, "long.ini", text, &e), SL_ECONFIG);
    ck_assert_ptr_nonnull(strstr(e.msg, "long.ini:2: line longer than 196 characters"));
    ck_assert_int_eq(sl_scenario_load_string(sc, "hex.ini", "[impactor]\ndiameter_m = 0xC8\n", &e),
                     SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "hex.ini:2"));
    ck_assert_ptr_nonnull(strstr(e.msg, "diameter_m"));
    ck_assert_int_eq(sl_scenario_load_string(sc, "law.ini", "[impactor]\ndiameter_m = unifrom(1, 2)\n", &e),
                     SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "'unifrom' is not a distribution law"));
    free(sc);
}
END_TEST

START_TEST(misspelled_law_named)
{
    sl_dist d;
    sl_err e = {0};
    ck_assert_int_eq(sl_dist_parse("lognormel(300, 0.3)", "diameter_m", "x.ini:3", &d, &e), SL_EDATA);
    ck_assert_ptr_nonnull(strstr(e.msg, "'lognormel' is not a distribution law"));
    ck_assert_int_eq(sl_dist_parse("uniform(0x10, 20)", "diameter_m", "x.ini:3", &d, &e), SL_EDATA);
}
END_TEST

/* --force once replaced symlinks, FIFOs and devices with a regular file. */
START_TEST(only_regular_files_replaced)
{
    char dir[256], target[300], link[300], fifo[300];
    tmp_path(dir, sizeof dir, "outdir");
    ck_assert_int_eq(mkdir(dir, 0700), 0);
    snprintf(target, sizeof target, "%s/target.txt", dir);
    snprintf(link, sizeof link, "%s/link.csv", dir);
    snprintf(fifo, sizeof fifo, "%s/fifo.csv", dir);
    write_bytes(target, "keep\n", 5);
    ck_assert_int_eq(symlink("target.txt", link), 0);
    ck_assert_int_eq(mkfifo(fifo, 0600), 0);
    for (int force = 0; force <= 1; force++) {
        sl_outset set = {0};
        sl_err e = {0};
        const char *stage;
        ck_assert_int_eq(sl_outset_begin_file(&set, link, force, &stage, &e), SL_ECANTCREAT);
        ck_assert_ptr_nonnull(strstr(e.msg, "is a symbolic link; only a regular file"));
        ck_assert_int_eq(sl_outset_begin_file(&set, fifo, force, &stage, &e), SL_ECANTCREAT);
        ck_assert_ptr_nonnull(strstr(e.msg, "is a FIFO"));
        ck_assert_int_eq(sl_outset_begin_file(&set, "/dev/null", force, &stage, &e), SL_ECANTCREAT);
        ck_assert_ptr_nonnull(strstr(e.msg, "is a character device"));
    }
    struct stat st;
    ck_assert_int_eq(lstat(link, &st), 0);
    ck_assert(S_ISLNK(st.st_mode));
    ck_assert_int_eq(lstat("/dev/null", &st), 0);
    ck_assert(S_ISCHR(st.st_mode));
    /* A regular file is replaced with --force, and the stage is gone. */
    sl_outset set = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_outset_begin(&set, dir, 1, 0, &e), SL_OK);
    ck_assert_int_eq(sl_outset_write_file(&set, "target.txt", "new\n", 4, &e), SL_OK);
    ck_assert_int_eq(sl_outset_commit(&set, &e), SL_OK);
    ck_assert_int_eq(stat(target, &st), 0);
    ck_assert_int_eq(st.st_size, 4);
    unlink(link);
    unlink(fifo);
    unlink(target);
    ck_assert_int_eq(rmdir(dir), 0); /* fails if a stage folder were left */
}
END_TEST

/* A stage folder left by a killed run (a PID that no longer exists) is
 * removed by the next set begun there; one of a live process is not. */
START_TEST(stale_stage_removed)
{
    char dir[256], host[65] = "host", stale[600], live[600], f[700];
    tmp_path(dir, sizeof dir, "stale");
    ck_assert_int_eq(mkdir(dir, 0700), 0);
    if (gethostname(host, sizeof host - 1) != 0)
        strcpy(host, "host");
    host[sizeof host - 1] = '\0';
    for (char *h = host; *h; h++)
        if (*h == '/' || *h == '-' || *h == '.')
            *h = '_';
    /* PID 2^22 + 1 is above Linux's pid_max limit, so it cannot be running. */
    snprintf(stale, sizeof stale, "%s/.steamloft-stage-%s-%ld-abcdef", dir, host, 4194305L);
    snprintf(live, sizeof live, "%s/.steamloft-stage-%s-%ld-ghijkl", dir, host, (long)getppid());
    ck_assert_int_eq(mkdir(stale, 0700), 0);
    ck_assert_int_eq(mkdir(live, 0700), 0);
    snprintf(f, sizeof f, "%s/partial.nc", stale);
    write_bytes(f, "x", 1);
    sl_outset set = {0};
    sl_err e = {0};
    ck_assert_int_eq(sl_outset_begin(&set, dir, 0, 0, &e), SL_OK);
    sl_outset_abort(&set);
    struct stat st;
    ck_assert_int_ne(stat(stale, &st), 0);
    ck_assert_int_eq(stat(live, &st), 0);
    ck_assert_int_eq(rmdir(live), 0);
    ck_assert_int_eq(rmdir(dir), 0);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("fuzz_regressions");
    TCase *t = tcase_create("readers");
    tcase_add_test(t, injection_nc_altitude_on_a_longer_dimension);
    tcase_add_test(t, injection_nc_altitude_2d);
    tcase_add_test(t, damaged_classic_header_refused_before_the_library);
    tcase_add_test(t, numbers_are_decimal_only);
    tcase_add_test(t, injection_csv_bom_crlf_and_prose_comment);
    tcase_add_test(t, atmosphere_text_bom_crlf);
    tcase_add_test(t, text_size_cap_and_directory);
    tcase_add_test(t, scenario_line_rule_ignores_comments);
    tcase_add_test(t, misspelled_law_named);
    suite_add_tcase(s, t);
    TCase *o = tcase_create("outputs");
    tcase_add_test(o, only_regular_files_replaced);
    tcase_add_test(o, stale_stage_removed);
    suite_add_tcase(s, o);
    return s;
}

SL_TEST_MAIN(suite)
