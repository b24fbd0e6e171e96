/* test_err.c -- the error value: format, first error wins, codes. */
#include <criterion/criterion.h>

#include "vecsift/err.h"

Test(err, file_and_line_prefix_the_message)
{
    struct err e = ERR_INIT;
    cr_assert_eq(err_set(&e, "inbox.csv", 118, "row has %d fields, header has %d", 3, 4), -1);
    cr_assert_str_eq(e.msg, "inbox.csv:118: row has 3 fields, header has 4");
    cr_assert_eq(e.code, ERR_INPUT);
}

Test(err, line_zero_names_only_the_file)
{
    struct err e = ERR_INIT;
    err_io(&e, "out.csv", 0, "cannot create");
    cr_assert_str_eq(e.msg, "out.csv: cannot create");
    cr_assert_eq(e.code, ERR_IO);
}

Test(err, first_error_is_kept)
{
    struct err e = ERR_INIT;
    err_set(&e, NULL, 0, "first");
    err_io(&e, "x", 1, "second");
    cr_assert_str_eq(e.msg, "first");
    cr_assert_eq(e.code, ERR_INPUT);
    err_hint(&e, "try %s", "this");
    cr_assert_str_eq(e.hint, "try this");
    err_clear(&e);
    cr_assert_eq(e.code, ERR_OK);
}
