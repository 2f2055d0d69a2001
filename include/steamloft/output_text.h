/* output_text: the summary of a run, as a readable text or as JSON.
 *
 * JSON comes from one list of calls on an sl_report (written by the one JSON
 * writer, json.h): each quantity is
 * emitted once with its JSON key (SI, unit in the key: energy_J) at full
 * precision; `decay` uses the same report for text too (label, display
 * factor and unit; three significant figures).  The text summary of `run`
 * is written for people in the order they read it: the answer first
 * (sl_key_results, the same numbers `tabulate` prints), then the water
 * budget, then one section per stage in the order of the chain, each with
 * a short default and its full detail under -v.  A stage adds its text
 * lines in its section function in output_text.c (text_descent, text_sea,
 * text_rise, ...) and its JSON keys in its emit_ function.  NaN prints as
 * null in JSON and "none" in text.
 *
 * Every report carries the caution (sl_cli_caution()). */
#ifndef STEAMLOFT_OUTPUT_TEXT_H
#define STEAMLOFT_OUTPUT_TEXT_H

#include <stdio.h>

#include "steamloft/chain.h"
#include "steamloft/err.h"
#include "steamloft/json.h"

typedef struct sl_report {
    FILE *out;
    int json;                         /* 1 JSON (through the one writer, json.h), 0 text */
    sl_json writer;                   /* the JSON state */
    int text_indent;
} sl_report;

/* Start a report on OUT (opens the top-level JSON object). */
void sl_report_begin(sl_report *r, FILE *out, int json);
/* Close it; SL_EIO when writing failed. */
int sl_report_end(sl_report *r, sl_err *e);
/* A heading in text (nothing in JSON). */
void sl_report_heading(sl_report *r, const char *title);
/* A number: JSON "KEY": VALUE_SI; text "LABEL  VALUE_SI*FACTOR UNIT". */
void sl_report_number(sl_report *r, const char *key, double value_si, const char *label, double factor,
                      const char *unit);
void sl_report_bool(sl_report *r, const char *key, int value, const char *label);
void sl_report_string(sl_report *r, const char *key, const char *value, const char *label);
/* Nested JSON object / array (KEY is NULL for an element of an array); in
 * text, LABEL starts an indented block. */
void sl_report_begin_object(sl_report *r, const char *key, const char *label);
void sl_report_end_object(sl_report *r);
void sl_report_begin_array(sl_report *r, const char *key, const char *label);
void sl_report_end_array(sl_report *r);

/* The box-model section of a summary (heading, the decay keys, what each
 * sink removed, what remains); used by `run` and `decay`. */
struct sl_strat_model;
struct sl_strat_result;
void sl_output_text_strat(sl_report *r, const struct sl_strat_model *m, const struct sl_strat_result *s);

/* The summary of `decay` (text or JSON): what was decayed (SOURCE), the
 * length of the run and the box-model section run's summary has, with the
 * same keys, and the caution. */
int sl_output_text_decay(FILE *out, const struct sl_strat_model *m, const struct sl_strat_result *r,
                         const char *source, int json, sl_err *e);

/* The box model's time series as CSV (`decay --series`): time in days, the
 * global excess, anomaly and columns, the forcing and each sink, %.6g. */
void sl_output_text_strat_series(FILE *out, const struct sl_strat_result *r);

/* `decay --calibrate`: the transport constants fitted to the published time
 * scales (sl_strat_calibrate) beside the defaults P, as a table.  SL_EIO when
 * writing failed; the fit's own statuses. */
int sl_output_text_calibration(FILE *out, const sl_strat_params *p,
                               const sl_atmosphere *const atm[SL_STRAT_N_REGIONS], sl_err *e);

/* X to three significant figures for people: fixed notation from 0.001 to
 * 999999 ("0.0042", "59.4", "1420"), else "1.83e+18"; "none" for NaN. */
void sl_output_fmt3(char *buf, size_t n, double x);

/* The key results of one chain run, the same numbers the summary opens with
 * and `steamloft tabulate` prints per scenario (SI; NaN when a stage did not
 * produce the quantity).  JSON keys of `run --json` in the comments. */
typedef struct sl_key_results {
    char name[128];              /* name: [scenario] name or the file name */
    const char *kind;            /* kind: "impactor" or "explosion" */
    const char *regime;          /* regime: "thermal" or "blow-out" */
    double energy_J;             /* energy_J: kinetic energy at entry, or the explosion's */
    double energy_at_sea_J;      /* energy_at_sea_J */
    double strat_injected_kg;    /* strat_injected_kg: water entering the box model (the same tropopause) */
    double strat_water_kg;       /* stratospheric_water_kg: plume stage, vapour + ice above the tropopause */
    double strat_vapor_kg;       /* stratospheric_vapor_kg: of it, vapour */
    double strat_ice_kg;         /* stratospheric_ice_kg: of it, ice */
    double background_burden_kg; /* background_burden_kg: background water above ~100 hPa */
    double percent_of_background; /* percent_of_background: peak excess / background */
    double efolding_years;       /* efolding_years (NaN when nothing entered) */
    int efolding_extrapolated;   /* efolding_extrapolated */
    double mean_residence_years; /* mean_residence_years */
    char validity[320];          /* validity: how far to trust the numbers, in words */
    char validity_short[64];     /* the same in a few words, for tables */
} sl_key_results;

void sl_output_key_results(const sl_chain *ch, sl_key_results *k);

/* The name of a source kind as every output spells it: "sea_plume",
 * "airburst" or "explosion" (JSON "sources"[].kind, sources.csv, the
 * netCDF source_kind flag_meanings). */
const char *sl_output_source_kind_name(sl_source_kind k);

/* The validity wording of sl_key_results from the plume regime (REGIME an
 * sl_plume_regime, ignored without a plume), the widest thermal-regime
 * source in apex scale heights (sl_plume.widest_thermal: strained from
 * SL_PLUME_WIDE_SCALE_HEIGHTS) and whether the e-folding time was
 * extrapolated: a few words (SHORT_TEXT) and in full (TEXT).  Also used for
 * the rows of a sweep and for the validity note of CSV, netCDF and plots. */
void sl_output_validity(int have_plume, int regime, double widest_thermal, int efolding_extrapolated,
                        char *short_text, size_t ns, char *text, size_t n);

/* The summary of a finished chain.  Text: it opens with the answer (water
 * above the tropopause, share of the background, e-folding time, regime,
 * validity), then the water budget and the stages in the order of the
 * chain, three significant figures; DETAIL (the global -v) adds the full
 * detail of every stage.  JSON (every number, full precision, the resolved
 * parameters) ignores DETAIL.  Both end with the caution. */
int sl_output_text_summary(FILE *out, const sl_chain *ch, int json, int detail, sl_err *e);

#endif
