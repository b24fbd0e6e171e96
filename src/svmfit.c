/* svmfit.c -- libsvm adapter: train, copy out, rebuild, predict, save, load.
 * See svmfit.h for the ownership story; ../shared DEPS notes on libsvm 3.24
 * are the reason for most of what happens here.
 */
#include "vecsift/svmfit.h"

#include <cjson/cJSON.h>
#include <libsvm/svm.h>
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#include "vecsift/err.h"
#include "vecsift/fmat.h"
#include "vecsift/jsonv.h"
#include "vecsift/xalloc.h"
#include "vec4.h"

/* K = labels, L = support vectors, P = K*(K-1)/2 pairs, D = dimensions. */
struct svmfit_model {
    size_t k, d;
    enum svmfit_kernel kernel;
    double gamma;
    struct svm_model m;     /* points into the arrays below */
    struct svm_node *nodes; /* all SV nodes, each SV terminated by index -1 */
    size_t nnodes;
    struct svm_node **sv;   /* (L) into nodes */
    double *coef;           /* (K-1, L) */
    double **coef_rows;     /* (K-1) into coef */
    double *rho, *probA, *probB; /* (P) in libsvm's class-slot order */
    int *label;             /* (K) libsvm class slot -> our label index */
    int *nsv;               /* (K) */
    /* Prediction on kernel values computed here (see "prediction" below):
     * pm is m with a PRECOMPUTED kernel, sharing its coefficients; dsv is
     * NULL when the model does not take this path. */
    struct svm_model pm;
    struct svm_node *pnodes;     /* (2L) SV j as libsvm's PRECOMPUTED SV: {0, j+1}, end */
    struct svm_node **psv;       /* (L) into pnodes */
    double *dsv;                 /* the SVs densely, by pack4: (L/4 rounded up, D, 4) */
    size_t nblk;                 /* blocks of four SVs in dsv */
    int on_nodes;                /* 1: predict through m, walking the nodes (tests) */
};

/* ---- rand() and srand() with one state per thread ----
 *
 * libsvm's probability estimate (svm_binary_svc_probability, inside
 * svm_train) shuffles each pair's rows for its internal 5-fold
 * cross-validation with rand().  glibc's rand() has one state for the whole
 * process, so two fits on two threads would interleave their draws and the
 * result would depend on scheduling.
 *
 * The two functions below replace the C library's for this program.  The
 * mechanism is ELF symbol interposition: libsvm.so calls rand through its
 * PLT, and the dynamic linker binds that call to the first definition in
 * the lookup order, which starts with the executable.  GNU ld puts a symbol
 * the executable defines into its dynamic symbol table when a shared library
 * on the link line refers to it (libsvm.so refers to rand@GLIBC_2.2.5), and
 * an unversioned definition satisfies a versioned reference.  Every
 * executable linked with svmfit.o (vecsift, the tests, the fuzzers) thus
 * gives libsvm these.  test_svmfit.c proves the binding: it counts the
 * draws libsvm makes during one fit and checks them against the number
 * svm_binary_svc_probability must make, and it checks that fits on four
 * threads at once give bit-identical models to the same fits one after
 * another.  C11 reserves the names (7.1.3); POSIX says rand() need not be
 * thread-safe, and no sanitizer or valgrind tool replaces them (the tests run
 * under both in tools/run-hardening).
 *
 * Each thread gets glibc's own generator (random_r.c, TYPE_3: the additive
 * feedback generator r[i] = r[i-3] + r[i-31] over 31 words, seeded by the
 * Park and Miller (1988, "Random Number Generators: Good Ones Are Hard to
 * Find", CACM 31(10)) minimal standard generator in Schrage's form, the
 * first 310 outputs discarded), so a fit draws exactly what it drew from
 * glibc's rand() before: results are unchanged.  test_svmfit.c checks the
 * sequence against glibc's random_r for several seeds.  A thread that never
 * calls srand() starts as srand(1), as the C standard requires. */
struct rand_state {
    int32_t r[31];
    int f, b;           /* front and back taps, 3 apart */
    int seeded;
    uint64_t draws;
};
static _Thread_local struct rand_state rs;

void srand(unsigned seed)
{
    if (seed == 0)
        seed = 1;
    int32_t word = (int32_t)seed;
    rs.r[0] = word;
    for (int i = 1; i < 31; i++) {
        long hi = word / 127773, lo = word % 127773;
        long w = 16807 * lo - 2836 * hi;
        if (w < 0)
            w += 2147483647;
        rs.r[i] = word = (int32_t)w;
    }
    rs.f = 3;
    rs.b = 0;
    rs.seeded = 1;
    uint64_t keep = rs.draws;
    for (int i = 0; i < 310; i++)
        (void)rand();
    rs.draws = keep;
}

int rand(void)
{
    if (!rs.seeded)
        srand(1);
    uint32_t v = (uint32_t)rs.r[rs.f] + (uint32_t)rs.r[rs.b];
    rs.r[rs.f] = (int32_t)v;
    rs.f = rs.f == 30 ? 0 : rs.f + 1;
    rs.b = rs.b == 30 ? 0 : rs.b + 1;
    rs.draws++;
    return (int)(v >> 1);
}

uint64_t svmfit_rand_draws(void)
{
    return rs.draws;
}

static void quiet(const char *s)
{
    (void)s;
}

static pthread_once_t quiet_once = PTHREAD_ONCE_INIT;

static void set_quiet(void)
{
    svm_set_print_string_function(quiet);
}

/* Row i of X as libsvm nodes (1-based indices, zeros omitted, -1 end).
 * 'buf' must hold D+1 nodes. */
static struct svm_node *row_nodes(const struct fmat *X, size_t i, struct svm_node *buf)
{
    size_t n = 0;
    if (X->sparse) {
        for (size_t j = X->rowptr[i]; j < X->rowptr[i + 1]; j++)
            if (X->val[j] != 0.0) {
                buf[n].index = (int)X->col[j] + 1;
                buf[n++].value = X->val[j];
            }
    } else {
        const double *x = X->x + i * X->d;
        for (size_t j = 0; j < X->d; j++)
            if (x[j] != 0.0) {
                buf[n].index = (int)j + 1;
                buf[n++].value = x[j];
            }
    }
    buf[n].index = -1;
    buf[n].value = 0;
    return buf;
}

static double default_gamma(const struct fmat *X)
{
    /* 1 / (D * Var(X)) over all entries, zeros included (the 'scale' rule
     * of scikit-learn's SVC, which wraps this same library). */
    double s = 0, s2 = 0;
    size_t cnt = X->n * X->d;
    if (X->sparse) {
        for (size_t j = 0; j < X->rowptr[X->n]; j++) {
            s += X->val[j];
            s2 += X->val[j] * X->val[j];
        }
    } else {
        for (size_t j = 0; j < cnt; j++) {
            s += X->x[j];
            s2 += X->x[j] * X->x[j];
        }
    }
    double mean = s / (double)cnt, var = s2 / (double)cnt - mean * mean;
    return var > 0 ? 1.0 / ((double)X->d * var) : 1.0;
}

static void dense_view(svmfit_model *m);

/* Point m->m at our arrays, and set up the dense prediction path. */
static void rebuild(svmfit_model *m, size_t l)
{
    size_t k = m->k;
    memset(&m->m, 0, sizeof m->m);
    m->m.param.svm_type = C_SVC;
    m->m.param.kernel_type = m->kernel == SVMFIT_RBF ? RBF : LINEAR;
    m->m.param.gamma = m->gamma;
    m->m.param.probability = 1;
    m->m.nr_class = (int)k;
    m->m.l = (int)l;
    m->coef_rows = xcalloc(k - 1, sizeof *m->coef_rows);
    for (size_t c = 0; c + 1 < k; c++)
        m->coef_rows[c] = m->coef + c * l;
    m->m.SV = m->sv;
    m->m.sv_coef = m->coef_rows;
    m->m.rho = m->rho;
    m->m.probA = m->probA;
    m->m.probB = m->probB;
    m->m.label = m->label;
    m->m.nSV = m->nsv;
    m->m.free_sv = 0;
    dense_view(m);
}

/* Support vector i of libsvm's model 'src' as feature nodes: trained on a
 * precomputed kernel ('rows' not NULL), its node 0 holds the training row's
 * serial number (1-based), and 'rows' the row's feature nodes. */
static const struct svm_node *sv_nodes(const struct svm_model *src, size_t i, struct svm_node *const *rows)
{
    return rows ? rows[(size_t)src->SV[i][0].value - 1] : src->SV[i];
}

/* Copy what prediction needs out of libsvm's model 'src'. */
static svmfit_model *copy_out(const struct svm_model *src, struct svm_node *const *rows, size_t k, size_t d,
                              enum svmfit_kernel kern, double gamma)
{
    svmfit_model *m = xcalloc(1, sizeof *m);
    size_t l = (size_t)src->l, np = k * (k - 1) / 2;
    m->k = k;
    m->d = d;
    m->kernel = kern;
    m->gamma = gamma;
    for (size_t i = 0; i < l; i++)
        for (const struct svm_node *p = sv_nodes(src, i, rows);; p++) {
            m->nnodes++;
            if (p->index == -1)
                break;
        }
    m->nodes = xcalloc(m->nnodes, sizeof *m->nodes);
    m->sv = xcalloc(l ? l : 1, sizeof *m->sv);
    size_t at = 0;
    for (size_t i = 0; i < l; i++) {
        m->sv[i] = m->nodes + at;
        for (const struct svm_node *p = sv_nodes(src, i, rows);; p++) {
            m->nodes[at++] = *p;
            if (p->index == -1)
                break;
        }
    }
    m->coef = xcalloc(xmul(k - 1, l ? l : 1), sizeof *m->coef);
    for (size_t c = 0; c + 1 < k; c++)
        memcpy(m->coef + c * l, src->sv_coef[c], l * sizeof(double));
    m->rho = xcalloc(np, sizeof(double));
    m->probA = xcalloc(np, sizeof(double));
    m->probB = xcalloc(np, sizeof(double));
    memcpy(m->rho, src->rho, np * sizeof(double));
    memcpy(m->probA, src->probA, np * sizeof(double));
    memcpy(m->probB, src->probB, np * sizeof(double));
    m->label = xcalloc(k, sizeof(int));
    m->nsv = xcalloc(k, sizeof(int));
    memcpy(m->label, src->label, k * sizeof(int));
    memcpy(m->nsv, src->nSV, k * sizeof(int));
    rebuild(m, l);
    return m;
}

/* ---- dense sums over packed vectors (training and prediction) ---- */

/* rows[0..n) (nodes, indices 1..d) densely in blocks of four: block b
 * holds rows 4b..4b+3 interleaved, value q of row 4b+t at (b d + q) 4 + t;
 * absent values and the rows past n that fill the last block are 0.  A
 * new array of ((n + 3) / 4) * d * 4 doubles. */
static double *pack4(struct svm_node *const *rows, size_t n, size_t d)
{
    double *v = xcalloc(xmul((n + 3) / 4, xmul(d, 4)), sizeof *v);
    for (size_t j = 0; j < n; j++)
        for (const struct svm_node *p = rows[j]; p->index != -1; p++)
            v[((j / 4) * d + (size_t)p->index - 1) * 4 + j % 4] = p->value;
    return v;
}

/* One pass over the D features for blocks b0 .. b0+NB of dsv: lane t of
 * acc[c] is the sum for vector 4 (b0 + c) + t, each added in feature order.
 * RBF is a constant 0 or 1, so each use compiles to one loop. */
#define KERNEL_PASS(NB, RBF)                                                        \
    do {                                                                       \
        v4d acc[NB];                                                           \
        VEC4_UNROLL                                                            \
        for (size_t c = 0; c < (NB); c++)                                      \
            acc[c] = VEC4_SPLAT(0.0);                                          \
        for (size_t q = 0; q < d; q++) {                                       \
            v4d xv = VEC4_SPLAT(x[q]);                                         \
            VEC4_UNROLL                                                        \
            for (size_t c = 0; c < (NB); c++) {                                \
                v4d sv;                                                        \
                VEC4_LOAD(sv, dsv + ((b0 + c) * d + q) * 4);                   \
                if (RBF) {                                                     \
                    v4d diff = xv - sv;                                        \
                    acc[c] += diff * diff;                                     \
                } else {                                                       \
                    acc[c] += xv * sv;                                         \
                }                                                              \
            }                                                                  \
        }                                                                      \
        VEC4_UNROLL                                                            \
        for (size_t c = 0; c < (NB); c++)                                      \
            VEC4_STORE(out + (b0 + c) * 4, acc[c]);                            \
    } while (0)

/* out[j] = sum over features of (x - v_j)^2 (rbf) or x * v_j, for the
 * nblk * 4 vectors v_j packed in dsv by pack4 (padding vectors are zero).
 * Each sum starts at +0 and adds its D terms in feature order, one lane
 * per vector; four blocks at a time keep four independent chains of adds
 * in flight. */
VEC4_CLONES static void kernel_sums(const double *dsv, size_t nblk, size_t d, const double *x, int rbf, double *out)
{
    size_t b0 = 0;
    if (rbf) {
        for (; b0 + 4 <= nblk; b0 += 4)
            KERNEL_PASS(4, 1);
        for (; b0 < nblk; b0++)
            KERNEL_PASS(1, 1);
    } else {
        for (; b0 + 4 <= nblk; b0 += 4)
            KERNEL_PASS(4, 0);
        for (; b0 < nblk; b0++)
            KERNEL_PASS(1, 0);
    }
}

/* ---- a precomputed kernel matrix ----
 *
 * Trained as is, libsvm evaluates the kernel on the sparse nodes again and
 * again: every pair of classes is trained six times (five for the internal
 * cross-validation of the probability estimate, one for the model), and
 * the dot products of dense rows walking node lists were three quarters of
 * compare's CPU time.  For up to PRECOMP_MAX_ROWS rows the kernel matrix is
 * computed once per fit instead and handed to libsvm as its PRECOMPUTED
 * kernel (row i: node 0 holds serial i+1, node j+1 holds K(i, j)).
 *
 * The values are libsvm's own, bit for bit: its Kernel::dot (the sum over
 * shared indices in index order) and, for RBF, its kernel_rbf form
 * exp(-gamma * (|x|^2 + |y|^2 - 2 x.y)).  So the model's support vectors,
 * dual coefficients and rho are exactly what libsvm computes from the
 * feature nodes (test_svmfit.c checks), and prediction (k_function's
 * values, see "prediction") is unchanged.  The one difference is inside
 * the probability estimate: when libsvm predicts its held-out rows there it
 * uses k_function, whose RBF form is exp(-gamma * |x - y|^2), which rounds
 * differently in the last bits; with the matrix it reads the kernel_rbf
 * value instead.  Platt's A and B then differ from the node-based fit by
 * about 1e-15 relative (the linear kernel has one form, so it is bit for
 * bit).  The cap keeps the matrix (16 bytes per entry: 36 MB at 1500 rows)
 * small; larger sets train on the nodes. */
#define PRECOMP_MAX_ROWS 1500

static double node_dot(const struct svm_node *px, const struct svm_node *py)
{
    double sum = 0;
    while (px->index != -1 && py->index != -1) {
        if (px->index == py->index) {
            sum += px->value * py->value;
            ++px;
            ++py;
        } else if (px->index > py->index) {
            ++py;
        } else {
            ++px;
        }
    }
    return sum;
}

/* The share of non-zeros above which the training rows are packed densely
 * for their dot products (below it, a walk over columns touches only the
 * products that exist). */
#define PACK_MIN_FILL 0.5

/* The kernel rows of xs[0..n) (d features) in libsvm's PRECOMPUTED layout;
 * '*slab' gets the memory to free.
 *
 * Only the lower triangle's dot products are computed: the matrix is
 * symmetric bit for bit (libsvm's dot multiplies the same pairs in the same
 * order either way round, and |x|^2 + |y|^2 commutes).  Each is node_dot's
 * sum, the products over the shared indices in ascending order, by one of
 * two routes:
 * - Mostly non-zero rows with finite values (pooled vectors): kernel_sums
 *   over all rows packed four by four, row i scattered densely, adds the
 *   products of all d features in index order.  The extra terms, where a
 *   row lacks the index, are +-0 and leave the sum unchanged: it starts at
 *   +0, never becomes -0 (+0 + -0 = +0 in round-to-nearest, and exact
 *   cancellation gives +0), and s + (+-0) = s for every other s.  An
 *   infinite value would make inf * 0 = NaN, hence the finiteness check.
 * - Otherwise (bag of words), by columns: for each index q of row i in
 *   ascending order, every row j <= i holding q gets x_iq * x_jq added to
 *   its sum, which is node_dot's sequence of additions for every j. */
static struct svm_node **kernel_rows(struct svm_node *const *xs, size_t n, size_t d, enum svmfit_kernel kern,
                                     double gamma, struct svm_node **slab)
{
    size_t w = n + 2;
    struct svm_node *all = xmalloc(xmul(xmul(n, w), sizeof *all)); /* every node is written below */
    struct svm_node **rows = xcalloc(n, sizeof *rows);
    double *sq = xcalloc(n, sizeof *sq);
    size_t nnz = 0;
    int finite = 1;
    for (size_t i = 0; i < n; i++) {
        rows[i] = all + i * w;
        rows[i][0].index = 0;
        rows[i][0].value = (double)(i + 1);
        rows[i][n + 1].index = -1;
        rows[i][n + 1].value = 0;
        sq[i] = node_dot(xs[i], xs[i]);
        for (const struct svm_node *p = xs[i]; p->index != -1; p++, nnz++)
            finite &= isfinite(p->value) != 0;
    }
    int packed = finite && d > 0 && (double)nnz >= PACK_MIN_FILL * (double)n * (double)d;
    double *pk = NULL, *fd = NULL, *cval = NULL;
    size_t *cstart = NULL, *crow = NULL;
    if (packed) {
        pk = pack4(xs, n, d);
        fd = xcalloc((n + 3) / 4 * 4, sizeof *fd);
    } else { /* the rows' values by column, rows ascending in each */
        cstart = xcalloc(d + 1, sizeof *cstart);
        crow = xcalloc(nnz ? nnz : 1, sizeof *crow);
        cval = xcalloc(nnz ? nnz : 1, sizeof *cval);
        for (size_t i = 0; i < n; i++)
            for (const struct svm_node *p = xs[i]; p->index != -1; p++)
                cstart[p->index]++;
        for (size_t q = 0; q < d; q++)
            cstart[q + 1] += cstart[q];
        size_t *fill = xcalloc(d ? d : 1, sizeof *fill);
        for (size_t i = 0; i < n; i++)
            for (const struct svm_node *p = xs[i]; p->index != -1; p++) {
                size_t at = cstart[p->index - 1] + fill[p->index - 1]++;
                crow[at] = i;
                cval[at] = p->value;
            }
        free(fill);
    }
    double *dots = xcalloc(n, sizeof *dots), *ri = xcalloc(d ? d : 1, sizeof *ri);
    for (size_t i = 0; i < n; i++) {
        if (packed) {
            for (const struct svm_node *p = xs[i]; p->index != -1; p++)
                ri[p->index - 1] = p->value;
            kernel_sums(pk, i / 4 + 1, d, ri, 0, fd); /* fd[j]: rows i and j, for every j <= i */
            for (const struct svm_node *p = xs[i]; p->index != -1; p++)
                ri[p->index - 1] = 0;
            memcpy(dots, fd, (i + 1) * sizeof *dots);
        } else {
            memset(dots, 0, (i + 1) * sizeof *dots);
            for (const struct svm_node *p = xs[i]; p->index != -1; p++) {
                size_t q = (size_t)p->index - 1;
                for (size_t at = cstart[q]; at < cstart[q + 1] && crow[at] <= i; at++)
                    dots[crow[at]] += p->value * cval[at];
            }
        }
        for (size_t j = 0; j <= i; j++) {
            double kv = kern == SVMFIT_RBF ? exp(-gamma * (sq[i] + sq[j] - 2 * dots[j])) : dots[j];
            rows[i][j + 1].index = (int)j + 1;
            rows[i][j + 1].value = kv;
            rows[j][i + 1].index = (int)i + 1;
            rows[j][i + 1].value = kv;
        }
    }
    free(dots);
    free(ri);
    free(pk);
    free(fd);
    free(cstart);
    free(crow);
    free(cval);
    free(sq);
    *slab = all;
    return rows;
}

/* Reorder the problem's rows (xs, ys) as libsvm's svm_group_classes would:
 * labels in the order they first appear, each label's rows in their order.
 * libsvm then finds them grouped already (its permutation is the identity)
 * and trains on the same rows in the same order, so the model is the same
 * bits: the same label slots, the same sub-problem per pair of classes, the
 * same rand() draws.  What changes is where the kernel values of a pair lie
 * in the precomputed matrix: each class's columns are one run, so libsvm's
 * kernel_precomputed, reading row i at the serial numbers of the pair's
 * rows, reads neighbouring entries instead of one cache line per entry.
 * The only trace in libsvm's model is sv_indices, which svmfit never uses
 * (copy_out maps serial numbers back through the reordered xs). */
static void group_rows(struct svm_node **xs, double *ys, size_t n, size_t k)
{
    size_t *slot = xmalloc(k * sizeof *slot), *start = xcalloc(k + 1, sizeof *start), nslot = 0;
    for (size_t c = 0; c < k; c++)
        slot[c] = SIZE_MAX;
    for (size_t i = 0; i < n; i++) {
        size_t c = (size_t)ys[i];
        if (slot[c] == SIZE_MAX)
            slot[c] = nslot++;
        start[slot[c] + 1]++;
    }
    for (size_t s = 0; s < nslot; s++)
        start[s + 1] += start[s];
    struct svm_node **gx = xmalloc(n * sizeof *gx);
    double *gy = xmalloc(n * sizeof *gy);
    for (size_t i = 0; i < n; i++) {
        size_t at = start[slot[(size_t)ys[i]]]++;
        gx[at] = xs[i];
        gy[at] = ys[i];
    }
    memcpy(xs, gx, n * sizeof *gx);
    memcpy(ys, gy, n * sizeof *gy);
    free(gx);
    free(gy);
    free(slot);
    free(start);
}

svmfit_model *svmfit_train(const struct fmat *X, const int *y, size_t k, const struct svmfit_params *p,
                           int *tiny, struct err *e)
{
    if (k < 2) {
        err_set(e, NULL, 0, "an SVM needs at least two labels");
        return NULL;
    }
    if (X->n > (size_t)INT32_MAX || X->d >= (size_t)INT32_MAX) {
        err_set(e, NULL, 0, "too many rows or features for libsvm");
        return NULL;
    }
    size_t *count = xcalloc(k, sizeof *count);
    for (size_t i = 0; i < X->n; i++)
        count[y[i]]++;
    if (tiny)
        *tiny = 0;
    for (size_t c = 0; c < k; c++) {
        if (count[c] == 0) {
            free(count);
            err_set(e, NULL, 0, "label %zu has no training rows", c);
            return NULL;
        }
        if (count[c] < 3 && tiny)
            *tiny = 1;
    }

    /* Problem: nodes for every row in one slab. */
    size_t nn = 0;
    struct svm_node *tmp = xcalloc(X->d + 1, sizeof *tmp);
    for (size_t i = 0; i < X->n; i++) {
        row_nodes(X, i, tmp);
        for (struct svm_node *q = tmp;; q++) {
            nn++;
            if (q->index == -1)
                break;
        }
    }
    struct svm_node *slab = xcalloc(nn, sizeof *slab);
    struct svm_node **xs = xcalloc(X->n, sizeof *xs);
    double *ys = xcalloc(X->n, sizeof *ys);
    size_t at = 0;
    for (size_t i = 0; i < X->n; i++) {
        row_nodes(X, i, tmp);
        xs[i] = slab + at;
        for (struct svm_node *q = tmp;; q++) {
            slab[at++] = *q;
            if (q->index == -1)
                break;
        }
        ys[i] = y[i];
    }
    free(tmp);
    struct svm_problem prob = { (int)X->n, ys, xs };

    double gamma = p->gamma > 0 ? p->gamma : (p->gamma < 0 ? -p->gamma : 1.0) * default_gamma(X);
    struct svm_parameter par;
    memset(&par, 0, sizeof par);
    par.svm_type = C_SVC;
    par.kernel_type = p->kernel == SVMFIT_RBF ? RBF : LINEAR;
    par.gamma = gamma;
    par.cache_size = p->cache_mb > 0 ? p->cache_mb : 100;
    par.eps = p->eps > 0 ? p->eps : 1e-3;
    par.C = p->C;
    par.shrinking = 1;
    par.probability = 1;
    /* Class weights are validated above (every label present), so libsvm's
     * stderr warning about a weight for an absent label cannot fire. */
    if (p->balanced) {
        par.nr_weight = (int)k;
        par.weight_label = xcalloc(k, sizeof(int));
        par.weight = xcalloc(k, sizeof(double));
        for (size_t c = 0; c < k; c++) {
            par.weight_label[c] = (int)c;
            par.weight[c] = (double)X->n / ((double)k * (double)count[c]);
        }
    }
    free(count);

    svmfit_model *out = NULL;
    struct svm_node **kx = NULL, *kslab = NULL;
    const char *bad = svm_check_parameter(&prob, &par);
    if (bad) {
        err_set(e, NULL, 0, "SVM settings rejected: %s", bad);
    } else {
        if (X->n <= PRECOMP_MAX_ROWS && !p->nodes_only) {
            group_rows(xs, ys, X->n, k);
            kx = kernel_rows(xs, X->n, X->d, p->kernel, gamma, &kslab);
            prob.x = kx;
            par.kernel_type = PRECOMPUTED;
        }
        pthread_once(&quiet_once, set_quiet);
        srand((unsigned)(p->seed ^ (p->seed >> 32))); /* this thread's rand(): see above */
        struct svm_model *sm = svm_train(&prob, &par);
        if (!sm || !sm->probA || !sm->probB) {
            err_set(e, NULL, 0, "the SVM could not be trained");
        } else {
            out = copy_out(sm, kx ? xs : NULL, k, X->d, p->kernel, gamma);
        }
        svm_free_and_destroy_model(&sm); /* model first: it points into the problem */
    }
    free(kx);
    free(kslab);
    free(par.weight_label); /* ours, not svm_destroy_param's: allocated here */
    free(par.weight);
    free(xs);
    free(slab);
    free(ys);
    return out;
}

void svmfit_free(svmfit_model *m)
{
    if (!m)
        return;
    free(m->nodes);
    free(m->sv);
    free(m->coef);
    free(m->coef_rows);
    free(m->rho);
    free(m->probA);
    free(m->probB);
    free(m->label);
    free(m->nsv);
    free(m->pnodes);
    free(m->psv);
    free(m->dsv);
    free(m);
}

size_t svmfit_labels(const svmfit_model *m) { return m->k; }
size_t svmfit_dim(const svmfit_model *m) { return m->d; }
double svmfit_gamma(const svmfit_model *m) { return m->gamma; }
size_t svmfit_support_vectors(const svmfit_model *m) { return (size_t)m->m.l; }
enum svmfit_kernel svmfit_kernel_of(const svmfit_model *m) { return m->kernel; }

/* ---- prediction ----
 *
 * libsvm predicts a row x by evaluating k_function(x, SV_j) for every
 * support vector j, walking both node lists; in compare that walk was a
 * tenth of the CPU time.  Where the support vectors are mostly non-zero,
 * dense_view keeps them densely as well, and a prediction computes all
 * K(x, SV_j) here in one pass over plain arrays, then asks libsvm to
 * predict with a PRECOMPUTED-kernel view of the same model: pm shares
 * sv_coef, rho, probA, probB, label and nSV with m, its SV j is the single
 * node {0, j+1}, and the query's node j+1 holds K(x, SV_j).  libsvm's
 * k_function for PRECOMPUTED returns x[(int)SV_j[0].value].value, so it
 * reads our values, and everything after the kernel (decision values,
 * Platt's sigmoid, pairwise coupling) is libsvm's own code on the same
 * numbers.
 *
 * The values are bit for bit k_function's (libsvm 3.24 svm.cpp):
 * - RBF: k_function adds, over the union of both rows' indices in
 *   ascending order, (x_q - y_q)^2 where both have index q and the lone
 *   value squared where one has it, then returns exp(-gamma * sum).  The
 *   dense loop adds (x_q - y_q)^2 for every q from 1 to D in the same order,
 *   the absent values being 0: x - 0 = x and 0 - y = -y exactly, so the
 *   one-sided terms are the same products, and where both are absent it
 *   adds (0 - 0)^2 = +0, which leaves any sum unchanged (the sum starts at
 *   +0 and never becomes -0: every term is +0 or positive).
 * - Linear: k_function is the sum of x_q * y_q over the shared indices in
 *   ascending order.  The dense loop also adds x_q * 0 = +-0 where one side
 *   is absent; s + (+-0) = s for every s other than -0, and the sum cannot
 *   become -0 (it starts at +0 and +0 + -0 = +0 in round-to-nearest).  Only
 *   inf * 0 = NaN would differ, so a row with a non-finite value, or a model
 *   whose support vectors hold one, takes libsvm's node walk.
 * Neither loop may contract a * b + c into a fused multiply-add: the build
 * is in ISO C mode (GCC then never contracts) and the AVX2 copy does not
 * enable FMA (vec4.h).  test_svmfit.c compares both paths with memcmp.
 *
 * The dense path pays where most features are non-zero (pooled word
 * vectors); bag-of-words support vectors are mostly zeros over a wide
 * vocabulary, and the node walk, which touches only the non-zeros, stays
 * cheaper there. */

/* The dense path needs at least this share of non-zeros among the support
 * vectors' L x D values, and at most DENSE_MAX_VALUES values in all. */
#define DENSE_MIN_FILL 0.5
#define DENSE_MAX_VALUES ((size_t)1 << 24)

static void dense_view(svmfit_model *m)
{
    size_t l = (size_t)m->m.l, d = m->d;
    m->on_nodes = 0;
    if (l == 0 || d == 0 || l > (size_t)INT32_MAX - 2)
        return;
    m->nblk = (l + 3) / 4;
    if (m->nblk > DENSE_MAX_VALUES / 4 / d || (double)(m->nnodes - l) < DENSE_MIN_FILL * (double)l * (double)d)
        return;
    for (size_t a = 0; a < m->nnodes; a++)
        if (m->nodes[a].index != -1 && !isfinite(m->nodes[a].value))
            return;
    m->dsv = pack4(m->sv, l, d);
    m->pnodes = xcalloc(2 * l, sizeof *m->pnodes);
    m->psv = xcalloc(l, sizeof *m->psv);
    for (size_t j = 0; j < l; j++) {
        m->psv[j] = m->pnodes + 2 * j;
        m->psv[j][0].index = 0;
        m->psv[j][0].value = (double)(j + 1);
        m->psv[j][1].index = -1;
    }
    m->pm = m->m;
    m->pm.param.kernel_type = PRECOMPUTED;
    m->pm.SV = m->psv;
}

int svmfit_predict_on_nodes(svmfit_model *m, int on)
{
    m->on_nodes = on != 0;
    return m->dsv && !m->on_nodes;
}

/* Row i of X as the PRECOMPUTED query for m->pm (L + 2 nodes in 'q'), or
 * NULL when the row must take the node walk (see above). */
static struct svm_node *kernel_query(const svmfit_model *m, const struct fmat *X, size_t i, struct svm_node *q)
{
    size_t d = m->d, l = (size_t)m->m.l, nk = m->nblk * 4;
    double xst[256], kst[512];
    double *xd = xst, *kv = nk <= 512 ? kst : xmalloc(nk * sizeof *kv);
    const double *x;
    if (X->sparse) {
        xd = d <= 256 ? xst : xmalloc(d * sizeof *xd);
        memset(xd, 0, d * sizeof *xd);
        for (size_t j = X->rowptr[i]; j < X->rowptr[i + 1]; j++)
            xd[X->col[j]] = X->val[j];
        x = xd;
    } else {
        x = X->x + i * X->d;
    }
    int rbf = m->kernel == SVMFIT_RBF, ok = 1;
    for (size_t t = 0; !rbf && t < d; t++)
        ok &= isfinite(x[t]) != 0;
    if (ok) {
        kernel_sums(m->dsv, m->nblk, d, x, rbf, kv);
        q[0].index = 0;
        q[0].value = 0;
        for (size_t j = 0; j < l; j++) {
            q[j + 1].index = (int)j + 1;
            q[j + 1].value = rbf ? exp(-m->gamma * kv[j]) : kv[j];
        }
        q[l + 1].index = -1;
        q[l + 1].value = 0;
    }
    if (xd != xst)
        free(xd);
    if (kv != kst)
        free(kv);
    return ok ? q : NULL;
}

/* Predict row i of X with libsvm: probabilities into 'ps' (K, slot order)
 * when 'ps' is set, else decision values into 'dec' (P, slot order). */
static void predict(const svmfit_model *m, const struct fmat *X, size_t i, double *ps, double *dec)
{
    struct svm_node stackbuf[514];
    size_t l = (size_t)m->m.l, need = X->d + 1;
    int dense = m->dsv && !m->on_nodes && X->d == m->d;
    if (dense && l + 2 > need)
        need = l + 2;
    struct svm_node *buf = need <= 514 ? stackbuf : xcalloc(need, sizeof *buf);
    const struct svm_model *sm = &m->m;
    struct svm_node *x = dense ? kernel_query(m, X, i, buf) : NULL;
    if (x)
        sm = &m->pm;
    else
        x = row_nodes(X, i, buf);
    if (ps)
        svm_predict_probability(sm, x, ps);
    else
        svm_predict_values(sm, x, dec);
    if (buf != stackbuf)
        free(buf);
}

void svmfit_proba(const svmfit_model *m, const struct fmat *X, size_t i, double *p)
{
    double slot[64];
    double *ps = m->k <= 64 ? slot : xcalloc(m->k, sizeof *ps);
    predict(m, X, i, ps, NULL);
    for (size_t c = 0; c < m->k; c++)
        p[m->label[c]] = ps[c];
    if (ps != slot)
        free(ps);
}

void svmfit_decision(const svmfit_model *m, const struct fmat *X, size_t i, double *dec)
{
    size_t k = m->k, np = k * (k - 1) / 2;
    double *raw = xcalloc(np, sizeof *raw);
    predict(m, X, i, NULL, raw);
    /* libsvm orders pairs by class slot (s < t); map to our label order. */
    size_t q = 0;
    for (size_t s = 0; s < k; s++)
        for (size_t t = s + 1; t < k; t++, q++) {
            int a = m->label[s], b = m->label[t];
            int lo = a < b ? a : b, hi = a < b ? b : a;
            size_t idx = (size_t)lo * (2 * k - (size_t)lo - 1) / 2 + (size_t)(hi - lo - 1);
            dec[idx] = a < b ? raw[q] : -raw[q];
        }
    free(raw);
}

/* ---- persistence ---- */

static cJSON *int_array(const int *x, size_t n)
{
    cJSON *a = cJSON_CreateArray();
    for (size_t i = 0; i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateNumber(x[i]));
    return a;
}

void svmfit_save(const svmfit_model *m, cJSON *obj)
{
    size_t k = m->k, l = (size_t)m->m.l, np = k * (k - 1) / 2;
    cJSON_AddStringToObject(obj, "kernel", m->kernel == SVMFIT_RBF ? "rbf" : "linear");
    cJSON_AddItemToObject(obj, "gamma", jsonv_number_new(m->gamma));
    cJSON_AddItemToObject(obj, "slot_label", int_array(m->label, k));
    cJSON_AddItemToObject(obj, "slot_support", int_array(m->nsv, k));
    cJSON_AddItemToObject(obj, "rho", jsonv_doubles_new(m->rho, np));
    cJSON_AddItemToObject(obj, "platt_a", jsonv_doubles_new(m->probA, np));
    cJSON_AddItemToObject(obj, "platt_b", jsonv_doubles_new(m->probB, np));
    cJSON_AddItemToObject(obj, "dual_coef", jsonv_doubles_new(m->coef, (k - 1) * l));
    /* Support vectors, sparse: per vector its feature indices (0-based) and values. */
    cJSON *vecs = cJSON_CreateArray();
    for (size_t i = 0; i < l; i++) {
        cJSON *v = cJSON_CreateObject();
        cJSON *idx = cJSON_CreateArray();
        size_t n = 0;
        for (const struct svm_node *p = m->sv[i]; p->index != -1; p++, n++)
            cJSON_AddItemToArray(idx, cJSON_CreateNumber(p->index - 1));
        double *val = xcalloc(n ? n : 1, sizeof *val);
        n = 0;
        for (const struct svm_node *p = m->sv[i]; p->index != -1; p++)
            val[n++] = p->value;
        cJSON_AddItemToObject(v, "at", idx);
        cJSON_AddItemToObject(v, "value", jsonv_doubles_new(val, n));
        free(val);
        cJSON_AddItemToArray(vecs, v);
    }
    cJSON_AddItemToObject(obj, "support_vectors", vecs);
}

static int load_ints(const struct jsonv_ctx *c, const cJSON *obj, const char *key, size_t n, long lo, long hi, int *out)
{
    double *x = jsonv_doubles(c, obj, key, n, NULL);
    if (!x)
        return -1;
    for (size_t i = 0; i < n; i++) {
        if (x[i] != floor(x[i]) || x[i] < lo || x[i] > hi) {
            free(x);
            return jsonv_fail(c, key, "entry %zu is not a whole number in [%ld, %ld]", i, lo, hi);
        }
        out[i] = (int)x[i];
    }
    free(x);
    return 0;
}

svmfit_model *svmfit_load(const struct jsonv_ctx *c, const cJSON *obj, size_t d, size_t k)
{
    svmfit_model *m = xcalloc(1, sizeof *m);
    size_t np = k * (k - 1) / 2;
    m->k = k;
    m->d = d;
    const char *kern = jsonv_str(c, obj, "kernel");
    if (!kern)
        goto fail;
    if (strcmp(kern, "rbf") == 0)
        m->kernel = SVMFIT_RBF;
    else if (strcmp(kern, "linear") == 0)
        m->kernel = SVMFIT_LINEAR;
    else {
        jsonv_fail(c, "kernel", "is '%s', expected 'rbf' or 'linear'", kern);
        goto fail;
    }
    if (jsonv_num(c, obj, "gamma", 1e-300, 1e12, &m->gamma) < 0)
        goto fail;
    m->label = xcalloc(k, sizeof(int));
    m->nsv = xcalloc(k, sizeof(int));
    if (load_ints(c, obj, "slot_label", k, 0, (long)k - 1, m->label) < 0 ||
        load_ints(c, obj, "slot_support", k, 0, INT32_MAX, m->nsv) < 0)
        goto fail;
    {
        /* slot_label must be a permutation of 0..K-1 */
        unsigned char *seen = xcalloc(k, 1);
        int dup = 0;
        for (size_t i = 0; i < k; i++)
            dup |= seen[m->label[i]]++;
        free(seen);
        if (dup) {
            jsonv_fail(c, "slot_label", "repeats a label");
            goto fail;
        }
    }
    size_t l = 0;
    for (size_t i = 0; i < k; i++)
        l += (size_t)m->nsv[i];
    const cJSON *vecs = jsonv_get(c, obj, "support_vectors");
    if (!vecs)
        goto fail;
    if (!cJSON_IsArray(vecs) || (size_t)cJSON_GetArraySize(vecs) != l || l == 0) {
        jsonv_fail(c, "support_vectors", "must be an array of %zu vectors (the sum of slot_support)", l);
        goto fail;
    }
    if (!(m->rho = jsonv_doubles(c, obj, "rho", np, NULL)) ||
        !(m->probA = jsonv_doubles(c, obj, "platt_a", np, NULL)) ||
        !(m->probB = jsonv_doubles(c, obj, "platt_b", np, NULL)) ||
        !(m->coef = jsonv_doubles(c, obj, "dual_coef", xmul(k - 1, l), NULL)))
        goto fail;
    /* Count nodes, validate indices, then fill. */
    m->sv = xcalloc(l, sizeof *m->sv);
    size_t total = 0;
    const cJSON *v;
    cJSON_ArrayForEach(v, vecs)
    {
        const cJSON *at = cJSON_IsObject(v) ? cJSON_GetObjectItemCaseSensitive(v, "at") : NULL;
        if (!cJSON_IsArray(at)) {
            jsonv_fail(c, "support_vectors", "has an entry without an 'at' array");
            goto fail;
        }
        total += (size_t)cJSON_GetArraySize(at) + 1;
    }
    m->nodes = xcalloc(total, sizeof *m->nodes);
    m->nnodes = total;
    size_t pos = 0, i = 0;
    cJSON_ArrayForEach(v, vecs)
    {
        struct jsonv_ctx sub = *c;
        sub.path = "classifier.support_vectors[]";
        size_t n;
        double *idx = jsonv_doubles(&sub, v, "at", SIZE_MAX, &n);
        double *val = idx ? jsonv_doubles(&sub, v, "value", n, NULL) : NULL;
        if (!val) {
            free(idx);
            goto fail;
        }
        m->sv[i++] = m->nodes + pos;
        for (size_t j = 0; j < n; j++) {
            double prev = j ? idx[j - 1] : -1;
            if (idx[j] != floor(idx[j]) || idx[j] <= prev || idx[j] >= (double)d) {
                free(idx);
                free(val);
                jsonv_fail(c, "support_vectors", "vector %zu has a feature index out of order or outside [0, %zu)", i - 1, d);
                goto fail;
            }
            m->nodes[pos].index = (int)idx[j] + 1;
            m->nodes[pos++].value = val[j];
        }
        m->nodes[pos].index = -1;
        m->nodes[pos++].value = 0;
        free(idx);
        free(val);
    }
    rebuild(m, l);
    return m;
fail:
    svmfit_free(m);
    return NULL;
}
