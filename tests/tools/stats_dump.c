/* stats_dump.c -- test-only: print stats.h results as JSON for
 * tests/ext/stats_vs_scipy.py.  Not installed.
 *
 *   stats_dump ttest N_TEST N_TRAIN D1 D2 ...
 *   stats_dump powerlaw N1 Y1 N2 Y2 ...
 *   stats_dump betainc A B X
 *   stats_dump tcdf T DF
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/stats.h"
#include "vecsift/xalloc.h"

static double arg(const char *s)
{
    char *end;
    double v = strtod(s, &end);
    if (*end) {
        fprintf(stderr, "stats_dump: not a number: %s\n", s);
        exit(2);
    }
    return v;
}

int main(int argc, char **argv)
{
    struct err e = ERR_INIT;
    if (argc >= 5 && !strcmp(argv[1], "ttest")) {
        size_t J = (size_t)(argc - 4);
        double *d = xmalloc(J * sizeof *d);
        for (size_t j = 0; j < J; j++)
            d[j] = arg(argv[4 + j]);
        struct stats_ttest t;
        if (stats_corrected_ttest(d, J, arg(argv[2]), arg(argv[3]), &t, &e) < 0) {
            fprintf(stderr, "stats_dump: %s\n", e.msg);
            return 2;
        }
        printf("{\"t\": %.17g, \"df\": %.17g, \"p_two_sided\": %.17g, \"p_greater\": %.17g, "
               "\"p_less\": %.17g, \"degenerate\": %d}\n",
               t.t, t.df, t.p_two_sided, t.p_greater, t.p_less, t.degenerate);
        free(d);
        return 0;
    }
    if (argc >= 2 && !strcmp(argv[1], "powerlaw") && argc % 2 == 0) {
        size_t m = (size_t)(argc - 2) / 2;
        double *n = xmalloc(m * sizeof *n), *y = xmalloc(m * sizeof *y);
        for (size_t i = 0; i < m; i++) {
            n[i] = arg(argv[2 + 2 * i]);
            y[i] = arg(argv[3 + 2 * i]);
        }
        struct stats_powerlaw f;
        if (stats_powerlaw_fit(n, y, m, &f, &e) < 0) {
            fprintf(stderr, "stats_dump: %s\n", e.msg);
            return 2;
        }
        printf("{\"a\": %.17g, \"b\": %.17g, \"c\": %.17g, \"rss\": %.17g, \"at_2n\": %.17g, "
               "\"iterations\": %d, \"converged\": %d, \"reliable\": %d, \"why\": \"%s\"}\n",
               f.a, f.b, f.c, f.rss, f.at_2n, f.iterations, f.converged, f.reliable, f.why);
        free(n);
        free(y);
        return 0;
    }
    if (argc == 5 && !strcmp(argv[1], "betainc")) {
        printf("%.17g\n", stats_betainc(arg(argv[2]), arg(argv[3]), arg(argv[4])));
        return 0;
    }
    if (argc == 4 && !strcmp(argv[1], "tcdf")) {
        printf("%.17g\n", stats_t_cdf(arg(argv[2]), arg(argv[3])));
        return 0;
    }
    fprintf(stderr, "usage: stats_dump ttest|powerlaw|betainc|tcdf ARGS...\n");
    return 2;
}
