/* fparse.h -- decimal text to float32, exactly as the C library's strtof
 * rounds it, but fast.
 *
 * Accepts the plain decimal grammar of vector files: an optional sign,
 * digits with an optional decimal point (at least one digit), and an
 * optional exponent ("e" or "E", optional sign, digits).  It refuses what
 * strtof would also take but a vector file should never hold: "nan", "inf",
 * hexadecimal floats.  The result is bit for bit what strtof returns for the
 * same characters under the "C" locale (tests/test_fparse.c checks this on
 * millions of strings).  It does not split lines; see vecset.c.
 */
#ifndef VECSIFT_FPARSE_H
#define VECSIFT_FPARSE_H

#include <stddef.h>

enum fparse_status {
    FPARSE_OK = 0,      /* *out holds the value (underflow to 0 or a subnormal is OK) */
    FPARSE_SYNTAX = 1,  /* no number starts at 's' */
    FPARSE_RANGE = 2    /* the value rounds beyond FLT_MAX (strtof would give inf) */
};

/* Parse one number starting at 's', reading no further than 'end'.  On
 * FPARSE_OK and FPARSE_RANGE, '*stop' is the first character after the
 * number (the caller checks that a separator follows); on FPARSE_SYNTAX it
 * is 's'.  Thread-safe, allocates nothing except for numbers longer than 200
 * characters that need the slow path. */
int fparse_f32(const char *s, const char *end, float *out, const char **stop);

/* Parse up to n numbers from [p, end), fields separated by spaces or tabs
 * (leading ones too), into out[0..n).  Returns how many were read: fewer
 * than n when the text ends first, or when a field is not wholly a number
 * or is out of range (fparse_f32 on that field tells which).  '*stop' is
 * the character after the last number read ('p' when none was): what
 * follows it is separators and then, if any, the next field.  Every value
 * is the one fparse_f32 gives. */
size_t fparse_f32_row(const char *p, const char *end, float *out, size_t n, const char **stop);

#endif
