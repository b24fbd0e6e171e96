/* common.h -- options and steps shared by the commands that read data or
 * fit pipelines: --text-col, --label-col, --encoding ..., --vectors,
 * --pool, --classifier, --C ...
 *
 * Each command splices the option macros below into its own table and hands
 * every option to *_option() first; these return 1 when they took it.
 */
#ifndef VECSIFT_CLI_COMMON_H
#define VECSIFT_CLI_COMMON_H

#include <stddef.h>
#include <stdint.h>

#include "cli.h"
#include "vecsift/corpus.h"
#include "vecsift/csv.h"
#include "vecsift/pipeline.h"
#include "vecsift/text.h"

struct vecset;

#define MAX_TEXT_COLS 32

struct data_args {
    const char *text_cols[MAX_TEXT_COLS];
    size_t ntext;
    const char *label_col;
    const char *group_col;
    struct csv_options csv;
    struct text_options text;
    int threads;
    uint64_t seed;
};

#define DATA_OPTIONS \
    { "text-col", 0, "<name>", "column holding the text; repeat to join several (default: text)" }, \
    { "label-col", 0, "<name>", "column holding the label (default: label)" }, \
    { "encoding", 0, "<name>", "utf-8 | windows-1252 | latin-1 (default: utf-8)" }, \
    { "replace-invalid", 0, NULL, "replace invalid UTF-8 by U+FFFD instead of stopping" }, \
    { "keep-accents", 0, NULL, "keep accents on Latin letters (default: cafe = café)" }, \
    { "mask-numbers", 0, NULL, "replace numbers by a placeholder token (default: keep them)" }, \
    { "keep-emails", 0, NULL, "keep e-mail addresses and URLs (default: masked: personal data)" }

#define RUN_OPTIONS \
    { "seed", 's', "<n>", "seed for every random choice (default: 1)" }, \
    { "threads", 't', "<n>", "worker threads, 1 to 256 (default: all cores)" }, \
    { "quiet", 'q', NULL, "no progress or notes on stderr" }

#define PIPELINE_OPTIONS \
    { "vectors", 'v', "<file>", "packed vector set (.vecs); needed unless --pool bow" }, \
    { "pool", 'p', "<how>", "mean | tfidf | sif | bow | bow+mean | bow+tfidf | bow+sif\n" \
      "                              (default: tfidf; bow needs no vectors; bow+P: both side by side)" }, \
    { "classifier", 'c', "<name>", "logreg | svm-linear | svm-rbf (default: logreg)" }, \
    { "C", 'C', "<x>", "inverse regularisation strength, > 0\n" \
      "                              (" PIPELINE_C_HELP ")" }, \
    { "gamma", 0, "<x>", "svm-rbf kernel width (default: 1 / (dimensions * variance))" }, \
    { "class-weight", 0, "<how>", "none | balanced: weight labels by n / (k * n_label) (default: none)" }, \
    { "sublinear-tf", 0, NULL, "use 1 + ln(tf) instead of raw term counts" }, \
    { "max-iter", 0, "<n>", "logreg: L-BFGS iteration cap (default: 1000)" }

void data_args_init(struct data_args *a);
/* 1: taken; 0: not a data/run option; -1: usage error printed. */
int data_args_option(struct data_args *a, const struct cli_cmd *cmd, const char *name, const char *val);
/* Dataset options from the arguments; 'labelled' selects whether the label
 * column is read.  Default text column "text", label column "label". */
void data_args_dataset(const struct data_args *a, int labelled, struct dataset_options *o);

struct fit_args {
    const char *vectors;
    struct pipeline_spec spec;
};
void fit_args_init(struct fit_args *f);
int fit_args_option(struct fit_args *f, const struct cli_cmd *cmd, const char *name, const char *val);

/* Errors from fitting (features_fit, pipeline_fit) cannot know which file
 * the rows came from: prefix 'path' unless the message already starts with
 * it, keeping the code and the hint, so every bad-input message names a file. */
void err_name_file(struct err *e, const char *path);

/* --folds, --repeats and --search, for the commands that cross-validate:
 * 1 taken, 0 not one of them, -1 after a usage error. */
struct cv_params;
int cv_args_option(struct cv_params *cp, const struct cli_cmd *cmd, const char *name, const char *val);

/* For the commands that cross-validate: keep freed blocks in the process
 * for the next fold instead of returning them to the system (allocation
 * placement only, never a result). */
void cli_keep_freed_memory(void);

/* With a group column: every row's group id (rows with the same value share
 * one), set as cp->group and cp->n_groups; the caller frees the array.
 * Without one: NULL, and cp is left as it was. */
int *cv_args_groups(struct cv_params *cp, const struct corpus *c);

/* data_args_option, then fit_args_option, then cv_args_option: the options
 * every cross-validating command shares.  Same return values. */
int cv_command_option(struct data_args *da, struct fit_args *fa, struct cv_params *cp, const struct cli_cmd *cmd,
                      const char *name, const char *val);

/* Open the vector set when the pooling needs one (error when missing). */
int fit_args_open_vectors(const struct fit_args *f, struct vecset **vs, struct err *e);

/* The name of option index 'i' in cmd's table. */
static inline const char *opt_name(const struct cli_cmd *cmd, int i)
{
    return cmd->opts[i].name;
}

/* Online cores, at least 1. */
int cores(void);

/* A confidence cut-off as every command prints it: the shortest decimal
 * with at least three places that reads back as 'p' (evaluate's advice
 * 0.884 stays "0.884", 0.9 is "0.900", 0.8841 is "0.8841"). */
void cut_format(double p, char *buf, size_t n);

#endif
