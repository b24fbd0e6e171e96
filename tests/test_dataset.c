/* test_dataset.c -- loading a labelled CSV file into memory. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "vecsift/dataset.h"
#include "vecsift/err.h"

/* Invented rows from a fictional company's support inbox. */
static char path[64];

static void put_file(const char *content)
{
    strcpy(path, "/tmp/vecsift-ds-XXXXXX");
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    size_t n = strlen(content);
    cr_assert_eq(write(fd, content, n), (ssize_t)n);
    close(fd);
}

static void cleanup(void)
{
    if (path[0])
        unlink(path);
}

TestSuite(dataset, .fini = cleanup);

static const char *subj_body[] = { "subject", "body" };
static const char *body_only[] = { "body" };

Test(dataset, joins_text_sorts_labels_and_keeps_groups)
{
    put_file("subject,body,queue,customer\n"
             "Invoice,charged twice,billing,c1\n"
             "Login,\"cannot\nsign in\",access,c2\n"
             "Refund,,billing,c1\n"
             ",  ,Billing,c3\n");
    struct dataset_options o = { subj_body, 2, "queue", "customer", CSV_OPTIONS_INIT };
    struct dataset d;
    struct err e = ERR_INIT;
    cr_assert_eq(dataset_load(&d, path, &o, &e), 0, "%s", e.msg);
    cr_assert_eq(d.n, 4);
    cr_assert_str_eq(d.text[0], "Invoice charged twice");
    cr_assert_str_eq(d.text[1], "Login cannot\nsign in");
    cr_assert_str_eq(d.text[2], "Refund ");
    cr_assert_str_eq(d.text[3], "   ");
    cr_assert_eq(d.empty_text, 1);
    cr_assert_eq(d.line[1], 3);
    cr_assert_eq(d.line[2], 5, "row after a two-line field starts on line 5");
    /* bytewise order: uppercase 'B' (0x42) sorts before lowercase letters */
    cr_assert_eq(d.nlabels, 3);
    cr_assert_str_eq(d.labels[0], "Billing");
    cr_assert_str_eq(d.labels[1], "access");
    cr_assert_str_eq(d.labels[2], "billing");
    cr_assert_eq(d.y[0], 2);
    cr_assert_eq(d.y[1], 1);
    cr_assert_eq(d.y[2], 2);
    cr_assert_eq(d.y[3], 0);
    cr_assert_str_eq(d.group[2], "c1");
    cr_assert_str_eq(d.label[1], "access");
    cr_assert_eq(dataset_label_index(&d, "access"), 1);
    cr_assert_eq(dataset_label_index(&d, "shipping"), -1);
    cr_assert_str_eq(d.path, path);
    dataset_release(&d);
    cr_assert_null(d.text);
    dataset_release(&d);    /* twice is harmless */
}

Test(dataset, unlabelled)
{
    put_file("body\nwhere is my parcel\n");
    struct dataset_options o = { body_only, 1, NULL, NULL, CSV_OPTIONS_INIT };
    struct dataset d;
    struct err e = ERR_INIT;
    cr_assert_eq(dataset_load(&d, path, &o, &e), 0, "%s", e.msg);
    cr_assert_eq(d.n, 1);
    cr_assert_null(d.label);
    cr_assert_null(d.y);
    cr_assert_null(d.group);
    cr_assert_eq(d.nlabels, 0);
    dataset_release(&d);
}

/* Loading 'content' must fail with the message "PATH" + 'want'; the
 * dataset is left empty.  The error is copied to 'out' when given. */
static void load_fails(const char *content, const struct dataset_options *o, const char *want, struct err *out)
{
    put_file(content);
    struct dataset d;
    struct err e = ERR_INIT;
    cr_assert_eq(dataset_load(&d, path, o, &e), -1);
    cr_assert_eq(e.code, ERR_INPUT);
    cr_assert_eq(strncmp(e.msg, path, strlen(path)), 0, "%s", e.msg);
    cr_assert_str_eq(e.msg + strlen(path), want);
    cr_assert_eq(d.n, 0);
    cr_assert_null(d.text);
    dataset_release(&d);
    if (out)
        *out = e;
}

Test(dataset, missing_column_lists_columns)
{
    struct dataset_options o = { subj_body, 2, "label", NULL, CSV_OPTIONS_INIT };
    struct err e;
    load_fails("subject,body,queue\nx,y,z\n", &o, ":1: no column 'label'", &e);
    cr_assert_str_eq(e.hint, "the columns are: 'subject', 'body', 'queue'");
}

Test(dataset, missing_text_or_group_column)
{
    struct dataset_options o = { subj_body, 2, "queue", NULL, CSV_OPTIONS_INIT };
    load_fails("subject,queue\nx,z\n", &o, ":1: no column 'body'", NULL);
    struct dataset_options g = { body_only, 1, "queue", "customer", CSV_OPTIONS_INIT };
    load_fails("body,queue\nx,z\n", &g, ":1: no column 'customer'", NULL);
}

Test(dataset, empty_label_names_line)
{
    struct dataset_options o = { body_only, 1, "queue", NULL, CSV_OPTIONS_INIT };
    load_fails("body,queue\nparcel late,shipping\n\"two\nlines\",billing\nno queue here,\n", &o,
               ":5: row has no label in column 'queue'", NULL);
    /* a label of only spaces counts as empty */
    load_fails("body,queue\nparcel late,  \n", &o, ":2: row has no label in column 'queue'", NULL);
}

Test(dataset, no_rows)
{
    struct dataset_options o = { body_only, 1, "queue", NULL, CSV_OPTIONS_INIT };
    load_fails("body,queue\r\n", &o, ": no data rows after the header", NULL);
}

Test(dataset, csv_errors_pass_through)
{
    struct dataset_options o = { body_only, 1, "queue", NULL, CSV_OPTIONS_INIT };
    load_fails("body,queue\nok,a\nbroken\n", &o, ":3: row has 1 field, header has 2", NULL);
}

Test(dataset, no_text_column_asked)
{
    struct dataset_options o = { NULL, 0, NULL, NULL, CSV_OPTIONS_INIT };
    struct dataset d;
    struct err e = ERR_INIT;
    cr_assert_eq(dataset_load(&d, "unused.csv", &o, &e), -1);
    cr_assert_str_eq(e.msg, "no text column given");
}

Test(dataset, replaced_count)
{
    put_file("body\nab\xFF" "c\n\xC3\n");
    struct dataset_options o = { body_only, 1, NULL, NULL, { CSV_UTF8, 1 } };
    struct dataset d;
    struct err e = ERR_INIT;
    cr_assert_eq(dataset_load(&d, path, &o, &e), 0, "%s", e.msg);
    cr_assert_eq(d.replaced, 2);
    cr_assert_str_eq(d.text[0], "ab\xEF\xBF\xBD" "c");
    dataset_release(&d);
}
