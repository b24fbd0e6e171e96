/* cmd_serve.c -- `vecsift serve`: route tickets over HTTP as they arrive.
 *
 * The main thread loads the model, starts the HTTP threads (serve_http.c)
 * with SIGHUP, SIGINT and SIGTERM blocked, so that they reach only the
 * main thread, which waits for them with sigwait: SIGHUP reloads the model
 * file (serve_model.c: the old model serves until the new one is loaded
 * and validated; a damaged file is refused and logged), SIGINT or SIGTERM
 * stop the service once the requests being answered are done.  The
 * endpoints are in serve_api.c and docs/serve.md.
 */
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "common.h"
#include "serve_api.h"
#include "serve_http.h"
#include "serve_model.h"
#include "vecsift/err.h"
#include "vecsift/xalloc.h"

#define DEFAULT_LISTEN "127.0.0.1:8080"

static const struct cli_opt opts[] = {
    { "listen", 'l', "<host:port>", "numeric address and port to listen on; port 0 picks a free one\n"
      "                              (default: " DEFAULT_LISTEN ", this machine only)" },
    { "vectors", 'v', "<file>", "the model's vector set, when it moved (fingerprint must match)" },
    { "review-below", 'r', "<p>", "route tickets whose confidence is below p to 'review'\n"
      "                              (default: the model's stored cut-off, else 0)" },
    { "top", 'k', "<n>", "also answer the n most likely labels and their probabilities" },
    { "explain", 'x', "<n>", "add the n words that pushed each ticket most toward its label\n"
      "                              (logreg models only)" },
    { "max-body", 0, "<bytes>", "refuse larger request bodies with 413 (default: 1048576)" },
    { "max-batch", 0, "<n>", "refuse batches of more tickets with 413 (default: 100)" },
    { "threads", 't', "<n>", "threads answering requests (default: all cores)" },
    { "log-requests", 0, NULL, "log method, endpoint, status, ticket count and time of each request\n"
      "                              (never the ticket text)" },
    { "quiet", 'q', NULL, "no notes on stderr (start, reload and stop are still logged)" },
    { NULL, 0, NULL, NULL }
};

const struct cli_cmd cmd_serve_info = {
    "serve", "[options] MODEL.json",
    "route tickets over HTTP as they arrive: JSON in, predict's fields out",
    opts,
    "Endpoints: POST /route with one ticket {\"id\": ..., FIELD: \"text\", ...} (FIELD\n"
    "are the model's text columns) or {\"tickets\": [...]}; GET /health for the\n"
    "model's fingerprint and labels.  Answers carry predict's columns as fields\n"
    "(docs/serve.md).  Bad requests get a 4xx and a JSON error.  kill -HUP\n"
    "reloads MODEL.json: the old model serves until the new one is validated,\n"
    "and a damaged file is refused and logged.  SIGINT or SIGTERM stop it.\n"
    "Personal data: tickets hold it.  The service keeps and logs no ticket\n"
    "text (only counts and timings), but the network path and the callers may;\n"
    "retention is a matter for local law and your organisation's policy.  It\n"
    "speaks plain HTTP without authentication: keep it on this machine or\n"
    "behind a proxy that adds TLS and access control.  A classifier misroutes\n"
    "some tickets: keep a person on the 'review' route."
};

struct serve_args {
    const char *listen, *model;
    struct serve_settings st;
    long max_body, max_batch, threads;
    int log_requests;
};

static int parse(int argc, char **argv, struct serve_args *a)
{
    const struct cli_cmd *cmd = &cmd_serve_info;
    struct cli_parser p;
    cli_parser_init(&p, cmd, argc, argv);
    int i;
    const char *val;
    long top = 1, explain = 0;
    while ((i = cli_next(&p, &val)) >= 0) {
        const char *name = opt_name(cmd, i);
        int bad = 0;
        if (strcmp(name, "listen") == 0)
            a->listen = val;
        else if (strcmp(name, "vectors") == 0)
            a->st.vectors = val;
        else if (strcmp(name, "review-below") == 0)
            bad = cli_double(cmd, name, val, 0, 1, &a->st.cut);
        else if (strcmp(name, "top") == 0)
            bad = cli_long(cmd, name, val, 1, 1000, &top);
        else if (strcmp(name, "explain") == 0)
            bad = cli_long(cmd, name, val, 1, 100, &explain);
        else if (strcmp(name, "max-body") == 0)
            bad = cli_long(cmd, name, val, 16, 1L << 30, &a->max_body);
        else if (strcmp(name, "max-batch") == 0)
            bad = cli_long(cmd, name, val, 1, 100000, &a->max_batch);
        else if (strcmp(name, "threads") == 0)
            bad = cli_long(cmd, name, val, 1, 256, &a->threads);
        else if (strcmp(name, "log-requests") == 0)
            a->log_requests = 1;
        else if (strcmp(name, "quiet") == 0)
            cli_quiet = 1;
        if (bad < 0)
            break;
    }
    int rc = i == CLI_HELP ? -1 : i != CLI_END ? ERR_INPUT : 0;
    if (rc == 0 && p.npos != 1)
        rc = cli_usage(cmd, "serve takes one model file");
    if (rc == 0)
        a->model = a->st.model_path = p.pos[0];
    a->st.top = (size_t)top;
    a->st.explain = (size_t)explain;
    cli_parser_release(&p);
    return rc;
}

static void log_model(const char *what, const char *path, const struct served *m)
{
    fprintf(stderr, "vecsift: serve: %s %s: fingerprint %s, %zu labels, review below %.4f\n", what, path,
            m->fingerprint, m->m.k, m->cut);
}

/* SIGHUP: load the file again; publish it only when it loaded whole. */
static void reload(struct serve_ctx *sc)
{
    struct err e = ERR_INIT;
    struct served *m = serve_model_load(&sc->st, &e);
    if (!m) {
        atomic_fetch_add(&sc->refused, 1);
        struct served *old = serve_model_get(&sc->slot);
        fprintf(stderr, "vecsift: serve: reload refused: %s\n", e.msg);
        if (e.hint[0])
            fprintf(stderr, "hint: %s\n", e.hint);
        fprintf(stderr, "vecsift: serve: still serving fingerprint %s\n", old->fingerprint);
        serve_model_put(old);
        return;
    }
    log_model("reloaded", sc->st.model_path, m);
    serve_model_swap(&sc->slot, m);
    atomic_fetch_add(&sc->reloads, 1);
}

int cmd_serve(int argc, char **argv)
{
    struct serve_args a;
    memset(&a, 0, sizeof a);
    a.listen = DEFAULT_LISTEN;
    a.st.cut = -1;
    a.max_body = 1L << 20;
    a.max_batch = 100;
    a.threads = cores();
    int rc = parse(argc, argv, &a);
    if (rc != 0)
        return rc < 0 ? ERR_OK : rc;

    struct err e = ERR_INIT;
    char *host = NULL;
    unsigned port = 0;
    serve_http_server *http = NULL;
    struct serve_ctx sc;
    memset(&sc, 0, sizeof sc);
    pthread_mutex_init(&sc.slot.mu, NULL);
    sc.st = a.st;
    sc.max_body = (size_t)a.max_body;
    sc.max_batch = (size_t)a.max_batch;
    sc.log_requests = a.log_requests;
    if (serve_http_listen(a.listen, &host, &port, &e) < 0) {
        rc = cli_usage(&cmd_serve_info, "%s", e.msg);
        goto done;
    }
    if (!(sc.slot.cur = serve_model_load(&sc.st, &e)))
        goto fail;
    /* Blocked before any thread starts, so every thread inherits the mask
     * and only sigwait below sees these signals. */
    sigset_t set;
    sigemptyset(&set);
    sigaddset(&set, SIGHUP);
    sigaddset(&set, SIGINT);
    sigaddset(&set, SIGTERM);
    pthread_sigmask(SIG_BLOCK, &set, NULL);
    struct serve_http_options ho = { host, port, sc.max_body, (unsigned)a.threads, serve_handle, &sc };
    if (!(http = serve_http_start(&ho, &e)))
        goto fail;
    sc.http = http;
    log_model("loaded", a.model, sc.slot.cur);
    fprintf(stderr, "vecsift: serve: listening on http://%s%s%s:%u/ (POST %s, GET %s), %ld threads\n",
            strchr(host, ':') ? "[" : "", host, strchr(host, ':') ? "]" : "", serve_http_port(http),
            SERVE_PATH_ROUTE, SERVE_PATH_HEALTH, a.threads);
    cli_note("note: no ticket text is logged; tickets hold personal data, so follow local law and "
             "policy for what callers keep (docs/serve.md)");
    for (;;) {
        int sig = 0;
        if (sigwait(&set, &sig) != 0)
            continue;
        if (sig == SIGHUP) {
            reload(&sc);
            continue;
        }
        fprintf(stderr, "vecsift: serve: %s received, stopping\n", sig == SIGINT ? "SIGINT" : "SIGTERM");
        break;
    }
    unsigned long c[3];
    serve_http_counts(http, c);
    serve_http_stop(http);
    http = NULL;
    fprintf(stderr, "vecsift: serve: stopped: %lu answered, %lu refused, %lu failed; %lu reloads, %lu refused\n",
            c[0], c[1], c[2], (unsigned long)atomic_load(&sc.reloads), (unsigned long)atomic_load(&sc.refused));
    rc = ERR_OK;
    goto done;
fail:
    rc = cli_fail(&e);
done:
    serve_http_stop(http);
    serve_model_put(sc.slot.cur);
    pthread_mutex_destroy(&sc.slot.mu);
    free(host);
    return rc;
}
