/* bench_serve_load.c -- the load client of bench_serve.sh (not part of the
 * test suite): THREADS threads, each on one kept-alive HTTP/1.1 connection
 * to 127.0.0.1:PORT, POST one JSON body after another (the lines of
 * BODIES, in turn) to PATH and wait for each answer.  Bounded: each thread
 * stops after SECONDS or MAXREQ requests, whichever comes first.
 *
 *   bench_serve_load PORT PATH BODIES THREADS SECONDS MAXREQ
 *
 * Prints one line: requests non_200 seconds requests_per_second p50_ms p99_ms
 * (latency from the first byte sent to the last byte of the answer read;
 * percentiles by the nearest-rank rule over all requests of all threads).
 */
#include <arpa/inet.h>
#include <errno.h>
#include <netinet/in.h>
#include <netinet/tcp.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

static int port;
static const char *path;
static char **bodies;
static size_t nbodies;
static double seconds;
static long maxreq;

struct result {
    double *lat;    /* (n) seconds */
    long n, bad;
    int failed;     /* the connection broke */
    size_t id;      /* thread number: where in BODIES it starts */
};

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + (double)t.tv_nsec * 1e-9;
}

static int connect_local(void)
{
    int fd = socket(AF_INET, SOCK_STREAM, 0);
    struct sockaddr_in a;
    memset(&a, 0, sizeof a);
    a.sin_family = AF_INET;
    a.sin_port = htons((uint16_t)port);
    a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    if (fd < 0 || connect(fd, (struct sockaddr *)&a, sizeof a) < 0) {
        if (fd >= 0)
            close(fd);
        return -1;
    }
    int one = 1;
    setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one);
    struct timeval tv = { 30, 0 };
    setsockopt(fd, SOL_SOCKET, SO_RCVTIMEO, &tv, sizeof tv);
    return fd;
}

/* Read one answer: headers, then Content-Length bytes.  Returns the status
 * or -1 when the connection broke. */
static int read_answer(int fd, char *buf, size_t cap)
{
    size_t have = 0;
    char *end = NULL;
    while (!(end = memmem(buf, have, "\r\n\r\n", 4))) {
        if (have == cap)
            return -1;
        ssize_t r = recv(fd, buf + have, cap - have, 0);
        if (r <= 0)
            return -1;
        have += (size_t)r;
    }
    size_t head = (size_t)(end - buf) + 4;
    int status = -1;
    if (sscanf(buf, "HTTP/1.%*d %d", &status) != 1)
        return -1;
    long clen = -1;
    for (char *p = buf; p < end; p++)
        if ((p == buf || p[-1] == '\n') && strncasecmp(p, "Content-Length:", 15) == 0)
            clen = strtol(p + 15, NULL, 10);
    if (clen < 0)
        return -1;
    size_t need = head + (size_t)clen;
    while (have < need) {
        char tmp[65536];
        size_t want = need - have < sizeof tmp ? need - have : sizeof tmp;
        ssize_t r = recv(fd, tmp, want, 0);
        if (r <= 0)
            return -1;
        have += (size_t)r;
    }
    return status;
}

static void *run(void *arg)
{
    struct result *res = arg;
    size_t cap = 1 << 20;
    char *buf = malloc(cap), *req = malloc(cap);
    res->lat = malloc((size_t)maxreq * sizeof *res->lat);
    int fd = connect_local();
    if (fd < 0 || !buf || !req || !res->lat) {
        res->failed = 1;
        goto out;
    }
    double stop = now() + seconds;
    size_t next = res->id * 7919 % nbodies;
    for (long i = 0; i < maxreq && now() < stop; i++) {
        const char *b = bodies[(next + (size_t)i) % nbodies];
        size_t bl = strlen(b);
        int hl = snprintf(req, cap, "POST %s HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
                                    "Content-Length: %zu\r\n\r\n", path, bl);
        if ((size_t)hl + bl > cap) {
            res->failed = 1;
            break;
        }
        memcpy(req + hl, b, bl);
        double t0 = now();
        size_t off = 0, len = (size_t)hl + bl;
        while (off < len) {
            ssize_t w = send(fd, req + off, len - off, MSG_NOSIGNAL);
            if (w <= 0)
                break;
            off += (size_t)w;
        }
        int st = off == len ? read_answer(fd, buf, cap) : -1;
        if (st < 0) {
            res->failed = 1;
            break;
        }
        res->lat[res->n++] = now() - t0;
        res->bad += st != 200;
    }
out:
    if (fd >= 0)
        close(fd);
    free(buf);
    free(req);
    return NULL;
}

static int cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

int main(int argc, char **argv)
{
    if (argc != 7) {
        fprintf(stderr, "usage: bench_serve_load PORT PATH BODIES THREADS SECONDS MAXREQ\n");
        return 2;
    }
    port = atoi(argv[1]);
    path = argv[2];
    int threads = atoi(argv[4]);
    seconds = atof(argv[5]);
    maxreq = atol(argv[6]);
    FILE *fp = fopen(argv[3], "r");
    if (!fp || threads < 1 || maxreq < 1) {
        fprintf(stderr, "bench_serve_load: bad arguments or %s: %s\n", argv[3], strerror(errno));
        return 2;
    }
    char *line = NULL;
    size_t lcap = 0, bcap = 0;
    ssize_t got;
    while ((got = getline(&line, &lcap, fp)) > 0) {
        if (line[got - 1] == '\n')
            line[--got] = '\0';
        if (nbodies == bcap)
            bodies = realloc(bodies, (bcap = bcap ? 2 * bcap : 256) * sizeof *bodies);
        bodies[nbodies++] = strdup(line);
    }
    free(line);
    fclose(fp);
    if (!nbodies)
        return 2;
    struct result *res = calloc((size_t)threads, sizeof *res);
    pthread_t *tid = calloc((size_t)threads, sizeof *tid);
    double t0 = now();
    for (int t = 0; t < threads; t++) {
        res[t].id = (size_t)t;
        pthread_create(&tid[t], NULL, run, &res[t]);
    }
    for (int t = 0; t < threads; t++)
        pthread_join(tid[t], NULL);
    double wall = now() - t0;
    long n = 0, bad = 0, failed = 0;
    for (int t = 0; t < threads; t++)
        n += res[t].n, bad += res[t].bad, failed += res[t].failed;
    double *all = malloc((size_t)(n ? n : 1) * sizeof *all);
    long k = 0;
    for (int t = 0; t < threads; t++) {
        memcpy(all + k, res[t].lat, (size_t)res[t].n * sizeof *all);
        k += res[t].n;
        free(res[t].lat);
    }
    qsort(all, (size_t)n, sizeof *all, cmp);
    /* nearest rank: the ceil(p n)-th smallest */
    double p50 = n ? all[(size_t)((n * 50 + 99) / 100) - 1] : 0, p99 = n ? all[(size_t)((n * 99 + 99) / 100) - 1] : 0;
    printf("%ld %ld %.3f %.1f %.3f %.3f\n", n, bad + failed, wall, n / wall, p50 * 1e3, p99 * 1e3);
    for (size_t i = 0; i < nbodies; i++)
        free(bodies[i]);
    free(bodies);
    free(all);
    free(res);
    free(tid);
    return failed ? 1 : 0;
}
