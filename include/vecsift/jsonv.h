/* jsonv.h -- reading JSON we did not write ourselves, safely (over cJSON).
 *
 * A model file may be damaged or hostile.  Every field read goes through
 * these checks: present, of the right type, in range, finite, of the
 * expected length.  Failures name the file and the field's path
 * ("classifier.W"), and are ERR_INPUT.  Also small writers for arrays of
 * doubles that round-trip exactly.
 */
#ifndef VECSIFT_JSONV_H
#define VECSIFT_JSONV_H

#include <stddef.h>
#include <stdint.h>

struct err;
struct cJSON;

/* Where we are, for messages: the file and the enclosing field path. */
struct jsonv_ctx {
    const char *file;
    const char *path;   /* "" at the top level */
    struct err *e;
};

/* The member 'key' of 'obj', required.  NULL with the error set when absent
 * or 'obj' is not an object. */
const struct cJSON *jsonv_get(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key);
/* A number in [lo, hi]. */
int jsonv_num(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key, double lo, double hi, double *out);
/* A whole number in [lo, hi]. */
int jsonv_size(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key, size_t lo, size_t hi, size_t *out);
/* A string; borrowed from the tree. */
const char *jsonv_str(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key);
/* An array of exactly 'n' finite numbers (any length when n is SIZE_MAX, then
 * *got receives it) into a new array the caller frees; NULL on error. */
double *jsonv_doubles(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key, size_t n, size_t *got);
/* An array of exactly n strings, each copied; caller frees each and the array. */
char **jsonv_strings(const struct jsonv_ctx *c, const struct cJSON *obj, const char *key, size_t n, size_t *got);

/* Error helper: "FILE: field 'PATH.key' <message>"; returns -1. */
int jsonv_fail(const struct jsonv_ctx *c, const char *key, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Shortest of %.15g, %.16g, %.17g that reads back as exactly x: for every
 * number vecsift writes to a file (JSON, CSV). */
void jsonv_format_double(double x, char *buf, size_t n);

/* A JSON number printed so that it reads back bit for bit. */
struct cJSON *jsonv_number_new(double x);

/* New JSON array of n doubles, printed so that they read back bit for bit. */
struct cJSON *jsonv_doubles_new(const double *x, size_t n);

/* Read and parse the JSON file 'path', a "what" ("model", "evaluation")
 * for messages: missing, not a regular file, larger than 'max_bytes',
 * empty, NUL bytes or a syntax error are ERR_INPUT errors naming the file
 * (and line).  Returns a tree the caller frees with cJSON_Delete, or NULL. */
struct cJSON *jsonv_load(const char *path, const char *what, size_t max_bytes, struct err *e);

/* Parse 'text' (len bytes) from 'file'; on a syntax error the message names
 * the line.  Returns a tree the caller frees with cJSON_Delete, or NULL. */
struct cJSON *jsonv_parse(const char *file, const char *text, size_t len, struct err *e);

#endif
