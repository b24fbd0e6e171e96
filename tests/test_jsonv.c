/* test_jsonv.c -- exact round trip of doubles through text, and the checks
 * on untrusted JSON (type, range, length, finiteness, syntax line). */
#include <cjson/cJSON.h>
#include <criterion/criterion.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/jsonv.h"
#include "vecsift/rng.h"

static cJSON *parse(const char *text, struct err *e)
{
    return jsonv_parse("t.json", text, strlen(text), e);
}

/* Random bit patterns cover every exponent, subnormals included (IEEE 754:
 * a zero exponent field with a non-zero fraction); NaN and infinity are
 * skipped, JSON cannot spell them.  Plus the edges by name. */
Test(jsonv, doubles_round_trip_bit_for_bit)
{
    enum { N = 200000 };
    double *x = malloc(N * sizeof *x);
    struct rng r;
    rng_seed(&r, 20261201);
    size_t n = 0, subnormal = 0;
    static const double edges[] = { 0.0, -0.0, DBL_MIN, -DBL_MIN, DBL_MAX, -DBL_MAX, DBL_TRUE_MIN, -DBL_TRUE_MIN,
                                    DBL_EPSILON, 1.0, 0.1, 1.0 / 3.0, 5e-324, 2.2250738585072009e-308, 1e23,
                                    9007199254740993.0, 123456789012345678.0 };
    for (size_t i = 0; i < sizeof edges / sizeof edges[0]; i++)
        x[n++] = edges[i];
    while (n < N) {
        uint64_t bits = rng_next(&r);
        if (n % 4 == 0) /* force the exponent field to zero: a subnormal */
            bits &= 0x800fffffffffffffULL;
        double v;
        memcpy(&v, &bits, sizeof v);
        if (!isfinite(v))
            continue;
        subnormal += fpclassify(v) == FP_SUBNORMAL;
        x[n++] = v;
    }
    cr_assert_gt(subnormal, N / 5);
    cJSON *obj = cJSON_CreateObject();
    cJSON_AddItemToObject(obj, "x", jsonv_doubles_new(x, N));
    cJSON_AddItemToObject(obj, "one", jsonv_number_new(x[N - 1]));
    char *text = cJSON_PrintUnformatted(obj);
    cJSON_Delete(obj);
    struct err e = ERR_INIT;
    cJSON *back = parse(text, &e);
    cr_assert_not_null(back, "%s", e.msg);
    struct jsonv_ctx c = { "t.json", "", &e };
    double *y = jsonv_doubles(&c, back, "x", N, NULL);
    cr_assert_not_null(y, "%s", e.msg);
    for (size_t i = 0; i < N; i++)
        cr_assert(memcmp(&x[i], &y[i], sizeof(double)) == 0, "entry %zu: wrote %a, read %a", i, x[i], y[i]);
    double one;
    cr_assert_eq(jsonv_num(&c, back, "one", -DBL_MAX, DBL_MAX, &one), 0, "%s", e.msg);
    cr_assert(memcmp(&one, &x[N - 1], sizeof one) == 0);
    free(y);
    free(x);
    cJSON_Delete(back);
    cJSON_free(text);
}

/* The shortest form is used when it reads back: 0.1 is "0.1", not 17 digits. */
Test(jsonv, format_is_shortest_that_reads_back)
{
    char buf[40];
    jsonv_format_double(0.1, buf, sizeof buf);
    cr_assert_str_eq(buf, "0.1");
    jsonv_format_double(1.0 / 3.0, buf, sizeof buf);
    cr_assert_str_eq(buf, "0.3333333333333333");
    jsonv_format_double(0.1 + 0.2, buf, sizeof buf);
    cr_assert_str_eq(buf, "0.30000000000000004");
}

Test(jsonv, bad_fields_are_named)
{
    struct err e = ERR_INIT;
    cJSON *root = parse("{\"a\": [1, 2, \"x\"], \"b\": [1, 1e999], \"n\": 2.5, \"s\": 3, \"o\": {\"k\": -1},"
                        " \"t\": [\"p\", 4]}",
                        &e);
    cr_assert_not_null(root, "%s", e.msg);
    struct jsonv_ctx c = { "t.json", "top", &e };
    size_t got, sz;
    double v;
    static const struct {
        int what;
        const char *key, *says;
    } cases[] = {
        { 0, "a", "t.json: field 'top.a' entry 2 is not a finite number" },
        { 0, "b", "t.json: field 'top.b' entry 1 is not a finite number" },
        { 0, "n", "field 'top.n' is not an array" },
        { 0, "zz", "field 'top.zz' is missing" },
        { 1, "a", "field 'top.a' has 3 entries, expected 2" },
        { 2, "n", "field 'top.n' is not a whole number" },
        { 3, "n", "field 'top.n' is 2.5, outside [3, 4]" },
        { 4, "s", "field 'top.s' is not a string" },
        { 5, "t", "field 'top.t' entry 1 is not a string" },
        { 6, "k", "field 'top' is not an object" },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        err_clear(&e);
        int failed = 0;
        switch (cases[k].what) {
        case 0: failed = jsonv_doubles(&c, root, cases[k].key, SIZE_MAX, &got) == NULL; break;
        case 1: failed = jsonv_doubles(&c, root, cases[k].key, 2, NULL) == NULL; break;
        case 2: failed = jsonv_size(&c, root, cases[k].key, 0, 10, &sz) < 0; break;
        case 3: failed = jsonv_num(&c, root, cases[k].key, 3, 4, &v) < 0; break;
        case 4: failed = jsonv_str(&c, root, cases[k].key) == NULL; break;
        case 5: failed = jsonv_strings(&c, root, cases[k].key, SIZE_MAX, &got) == NULL; break;
        case 6: failed = jsonv_get(&c, cJSON_GetObjectItem(root, "a"), cases[k].key) == NULL; break;
        }
        cr_assert(failed, "case %zu accepted", k);
        cr_assert(strstr(e.msg, cases[k].says), "case %zu: %s", k, e.msg);
        cr_assert_eq(e.code, ERR_INPUT);
    }
    cJSON_Delete(root);
}

Test(jsonv, syntax_errors_name_the_line)
{
    struct err e = ERR_INIT;
    cr_assert_null(parse("{\n\"a\": 1,\n\"b\": [1, 2,\n]\n}\n", &e));
    cr_assert(strstr(e.msg, "t.json:4:"), "%s", e.msg);
    err_clear(&e);
    cr_assert_null(parse("{\"a\": [1, 2", &e)); /* truncated */
    cr_assert(strstr(e.msg, "t.json:1:"), "%s", e.msg);
}
