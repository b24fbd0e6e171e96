/* jsonv.c -- validated reads of untrusted JSON (see jsonv.h). */
#include "vecsift/jsonv.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <sys/stat.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

int jsonv_fail(const struct jsonv_ctx *c, const char *key, const char *fmt, ...)
{
    char what[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    const char *dot = c->path && c->path[0] && key ? "." : "";
    return err_set(c->e, c->file, 0, "field '%s%s%s' %s", c->path ? c->path : "", dot, key ? key : "", what);
}

const cJSON *jsonv_get(const struct jsonv_ctx *c, const cJSON *obj, const char *key)
{
    if (!cJSON_IsObject(obj)) {
        jsonv_fail(c, NULL, "is not an object");
        return NULL;
    }
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!v)
        jsonv_fail(c, key, "is missing");
    return v;
}

int jsonv_num(const struct jsonv_ctx *c, const cJSON *obj, const char *key, double lo, double hi, double *out)
{
    const cJSON *v = jsonv_get(c, obj, key);
    if (!v)
        return -1;
    if (!cJSON_IsNumber(v))
        return jsonv_fail(c, key, "is not a number");
    double x = v->valuedouble;
    if (!isfinite(x) || x < lo || x > hi)
        return jsonv_fail(c, key, "is %g, outside [%g, %g]", x, lo, hi);
    *out = x;
    return 0;
}

int jsonv_size(const struct jsonv_ctx *c, const cJSON *obj, const char *key, size_t lo, size_t hi, size_t *out)
{
    double x;
    if (jsonv_num(c, obj, key, (double)lo, (double)hi, &x) < 0)
        return -1;
    if (x != floor(x))
        return jsonv_fail(c, key, "is not a whole number");
    *out = (size_t)x;
    return 0;
}

const char *jsonv_str(const struct jsonv_ctx *c, const cJSON *obj, const char *key)
{
    const cJSON *v = jsonv_get(c, obj, key);
    if (!v)
        return NULL;
    if (!cJSON_IsString(v) || !v->valuestring) {
        jsonv_fail(c, key, "is not a string");
        return NULL;
    }
    return v->valuestring;
}

static const cJSON *array_of(const struct jsonv_ctx *c, const cJSON *obj, const char *key, size_t n, size_t *got)
{
    const cJSON *a = jsonv_get(c, obj, key);
    if (!a)
        return NULL;
    if (!cJSON_IsArray(a)) {
        jsonv_fail(c, key, "is not an array");
        return NULL;
    }
    size_t len = (size_t)cJSON_GetArraySize(a);
    if (n != SIZE_MAX && len != n) {
        jsonv_fail(c, key, "has %zu entries, expected %zu", len, n);
        return NULL;
    }
    if (got)
        *got = len;
    return a;
}

double *jsonv_doubles(const struct jsonv_ctx *c, const cJSON *obj, const char *key, size_t n, size_t *got)
{
    size_t len;
    const cJSON *a = array_of(c, obj, key, n, &len);
    if (!a)
        return NULL;
    double *x = xcalloc(len ? len : 1, sizeof *x);
    size_t i = 0;
    const cJSON *it;
    cJSON_ArrayForEach(it, a)
    {
        if (!cJSON_IsNumber(it) || !isfinite(it->valuedouble)) {
            jsonv_fail(c, key, "entry %zu is not a finite number", i);
            free(x);
            return NULL;
        }
        x[i++] = it->valuedouble;
    }
    if (got)
        *got = len;
    return x;
}

char **jsonv_strings(const struct jsonv_ctx *c, const cJSON *obj, const char *key, size_t n, size_t *got)
{
    size_t len;
    const cJSON *a = array_of(c, obj, key, n, &len);
    if (!a)
        return NULL;
    char **s = xcalloc(len ? len : 1, sizeof *s);
    size_t i = 0;
    const cJSON *it;
    cJSON_ArrayForEach(it, a)
    {
        if (!cJSON_IsString(it) || !it->valuestring) {
            jsonv_fail(c, key, "entry %zu is not a string", i);
            for (size_t j = 0; j < i; j++)
                free(s[j]);
            free(s);
            return NULL;
        }
        s[i++] = xstrdup(it->valuestring);
    }
    if (got)
        *got = len;
    return s;
}

/* Shortest of %.15g/%.16g/%.17g that reads back exactly. */
void jsonv_format_double(double x, char *buf, size_t n)
{
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(buf, n, "%.*g", prec, x);
        if (strtod(buf, NULL) == x)
            break;
    }
}

cJSON *jsonv_number_new(double x)
{
    char buf[40];
    jsonv_format_double(x, buf, sizeof buf);
    return cJSON_CreateRaw(buf);
}

cJSON *jsonv_doubles_new(const double *x, size_t n)
{
    /* cJSON prints %.15g and switches to %.17g only when the shorter form
     * reads back within a relative epsilon, which is not bit-exact.  We write
     * the shortest of %.15g/%.16g/%.17g that reads back exactly (17
     * significant digits always do for IEEE 754 doubles) as raw text.
     * Callers never pass NaN or infinity (JSON has no spelling for them). */
    cJSON *a = cJSON_CreateArray();
    char buf[40];
    for (size_t i = 0; i < n; i++) {
        jsonv_format_double(x[i], buf, sizeof buf);
        cJSON_AddItemToArray(a, cJSON_CreateRaw(buf));
    }
    return a;
}

cJSON *jsonv_load(const char *path, const char *what, size_t max_bytes, struct err *e)
{
    FILE *fp = fopen(path, "rb");
    if (!fp) {
        err_set(e, path, 0, "cannot open %s: %s", what, strerror(errno));
        return NULL;
    }
    struct stat st;
    if (fstat(fileno(fp), &st) != 0 || !S_ISREG(st.st_mode)) {
        fclose(fp);
        err_set(e, path, 0, "not a regular file");
        return NULL;
    }
    if ((size_t)st.st_size > max_bytes) {
        fclose(fp);
        err_set(e, path, 0, "%s file is larger than %zu bytes", what, max_bytes);
        return NULL;
    }
    size_t n = (size_t)st.st_size;
    char *buf = xmalloc(n + 1);
    if (fread(buf, 1, n, fp) != n) {
        fclose(fp);
        free(buf);
        err_io(e, path, 0, "read failed");
        return NULL;
    }
    fclose(fp);
    buf[n] = '\0';
    cJSON *root = NULL;
    if (n == 0)
        err_set(e, path, 0, "empty file, not a %s", what);
    else if (memchr(buf, '\0', n))
        err_set(e, path, 0, "not a %s file (contains NUL bytes)", what);
    else
        root = jsonv_parse(path, buf, n, e);
    free(buf);
    return root;
}

cJSON *jsonv_parse(const char *file, const char *text, size_t len, struct err *e)
{
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithLengthOpts(text, len, &end, 0);
    if (!root) {
        long line = 1;
        const char *stop = end && end >= text && end <= text + len ? end : text;
        for (const char *p = text; p < stop; p++)
            line += *p == '\n';
        err_set(e, file, line, "not valid JSON here");
        return NULL;
    }
    return root;
}
