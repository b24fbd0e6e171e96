/* serve_http.c -- the HTTP plumbing of `vecsift serve` (serve_http.h) on
 * libmicrohttpd: one access callback collects the body of a request (at
 * most max_body bytes; a larger one is answered 413 and its bytes are
 * dropped as they arrive), then calls the handler once and queues its JSON
 * answer.  Bodies are never logged.
 */
#include "serve_http.h"

#include <arpa/inet.h>
#include <errno.h>
#include <netinet/in.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>

#include <cjson/cJSON.h>
#include <microhttpd.h>

#include "vecsift/err.h"
#include "vecsift/xalloc.h"

struct serve_http_server {
    struct MHD_Daemon *d;
    struct serve_http_options o;
    unsigned port;
    atomic_ulong count[3];
};

/* What one request collects while its body arrives. */
struct conn {
    char *buf;
    size_t len, cap;
    int too_big;
};

int serve_http_listen(const char *spec, char **host, unsigned *port, struct err *e)
{
    const char *colon = strrchr(spec, ':');
    if (!colon)
        return err_set(e, NULL, 0, "--listen '%s': expected HOST:PORT", spec);
    const char *h = spec;
    size_t hl = (size_t)(colon - spec);
    if (hl >= 2 && h[0] == '[' && h[hl - 1] == ']') {
        h++;
        hl -= 2;
    }
    char *end;
    errno = 0;
    long p = strtol(colon + 1, &end, 10);
    if (colon[1] == '\0' || *end != '\0' || errno || p < 0 || p > 65535)
        return err_set(e, NULL, 0, "--listen '%s': the port must be a number from 0 to 65535", spec);
    *host = hl ? xstrndup(h, hl) : xstrdup("127.0.0.1");
    *port = (unsigned)p;
    return 0;
}

void serve_http_error(struct serve_http_reply *out, unsigned status, const char *fmt, ...)
{
    char msg[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    cJSON *root = cJSON_CreateObject(), *err = cJSON_AddObjectToObject(root, "error");
    cJSON_AddNumberToObject(err, "status", status);
    cJSON_AddStringToObject(err, "message", msg);
    char *s = cJSON_PrintUnformatted(root);
    cJSON_Delete(root);
    if (!s)
        abort(); /* cJSON's allocation failed: out of memory, as xalloc does */
    size_t n = strlen(s);
    free(out->body);
    out->body = xmalloc(n + 2);
    memcpy(out->body, s, n);
    memcpy(out->body + n, "\n", 2);
    cJSON_free(s);
    out->status = status;
}

static enum MHD_Result send_reply(serve_http_server *s, struct MHD_Connection *c, struct serve_http_reply *r)
{
    unsigned cls = r->status / 100;
    atomic_fetch_add(&s->count[cls == 2 ? 0 : cls == 4 ? 1 : 2], 1);
    struct MHD_Response *resp =
        MHD_create_response_from_buffer(strlen(r->body), r->body, MHD_RESPMEM_MUST_FREE);
    if (!resp) {
        free(r->body);
        return MHD_NO;
    }
    MHD_add_response_header(resp, MHD_HTTP_HEADER_CONTENT_TYPE, "application/json");
    if (r->allow)
        MHD_add_response_header(resp, MHD_HTTP_HEADER_ALLOW, r->allow);
    enum MHD_Result ret = MHD_queue_response(c, r->status, resp);
    MHD_destroy_response(resp);
    return ret;
}

static enum MHD_Result on_request(void *cls, struct MHD_Connection *c, const char *url, const char *method,
                                  const char *version, const char *data, size_t *size, void **state)
{
    (void)version;
    serve_http_server *s = cls;
    struct conn *k = *state;
    if (!k) {
        k = xcalloc(1, sizeof *k);
        *state = k;
        /* A declared length over the limit is refused before any of the
         * body is read; the connection is then closed. */
        const char *cl = MHD_lookup_connection_value(c, MHD_HEADER_KIND, MHD_HTTP_HEADER_CONTENT_LENGTH);
        if (cl) {
            char *end;
            errno = 0;
            unsigned long long n = strtoull(cl, &end, 10);
            if (*end == '\0' && !errno && n > s->o.max_body) {
                struct serve_http_reply r = { 0, NULL, NULL };
                serve_http_error(&r, 413, "the body has %llu bytes, more than the limit of %zu (--max-body)", n,
                                 s->o.max_body);
                k->too_big = 1;
                return send_reply(s, c, &r);
            }
        }
        return MHD_YES;
    }
    if (*size) {
        if (!k->too_big && *size > s->o.max_body - k->len) {
            k->too_big = 1;
            free(k->buf);
            k->buf = NULL;
        }
        if (!k->too_big) {
            k->buf = xgrow(k->buf, &k->cap, k->len + *size + 1, 1);
            memcpy(k->buf + k->len, data, *size);
            k->len += *size;
        }
        *size = 0;
        return MHD_YES;
    }
    struct serve_http_reply r = { 0, NULL, NULL };
    if (k->too_big) {
        serve_http_error(&r, 413, "the body is larger than the limit of %zu bytes (--max-body)", s->o.max_body);
    } else {
        if (!k->buf)
            k->buf = xcalloc(1, 1);
        k->buf[k->len] = '\0';
        struct serve_http_request rq = {
            method, url, MHD_lookup_connection_value(c, MHD_HEADER_KIND, MHD_HTTP_HEADER_CONTENT_TYPE),
            k->buf, k->len
        };
        s->o.fn(s->o.ctx, &rq, &r);
        if (!r.body)
            serve_http_error(&r, 500, "the handler gave no answer");
    }
    return send_reply(s, c, &r);
}

static void on_done(void *cls, struct MHD_Connection *c, void **state, enum MHD_RequestTerminationCode why)
{
    (void)cls;
    (void)c;
    (void)why;
    struct conn *k = *state;
    if (k) {
        free(k->buf);
        free(k);
    }
    *state = NULL;
}

static void on_log(void *cls, const char *fmt, va_list ap)
{
    (void)cls;
    char msg[512];
    vsnprintf(msg, sizeof msg, fmt, ap);
    size_t n = strlen(msg);
    while (n && (msg[n - 1] == '\n' || msg[n - 1] == ' '))
        msg[--n] = '\0';
    fprintf(stderr, "vecsift: serve: http: %s\n", msg);
}

serve_http_server *serve_http_start(const struct serve_http_options *o, struct err *e)
{
    struct sockaddr_in a4;
    struct sockaddr_in6 a6;
    memset(&a4, 0, sizeof a4);
    memset(&a6, 0, sizeof a6);
    const struct sockaddr *sa;
    unsigned flags = MHD_USE_INTERNAL_POLLING_THREAD | MHD_USE_AUTO | MHD_USE_ERROR_LOG;
    if (inet_pton(AF_INET, o->host, &a4.sin_addr) == 1) {
        a4.sin_family = AF_INET;
        a4.sin_port = htons((uint16_t)o->port);
        sa = (const struct sockaddr *)&a4;
    } else if (inet_pton(AF_INET6, o->host, &a6.sin6_addr) == 1) {
        a6.sin6_family = AF_INET6;
        a6.sin6_port = htons((uint16_t)o->port);
        sa = (const struct sockaddr *)&a6;
        flags |= MHD_USE_IPv6;
    } else {
        err_set(e, NULL, 0, "--listen: '%s' is not a numeric IPv4 or IPv6 address", o->host);
        return NULL;
    }
    serve_http_server *s = xcalloc(1, sizeof *s);
    s->o = *o;
    s->d = MHD_start_daemon(flags, (uint16_t)o->port, NULL, NULL, on_request, s,
                            MHD_OPTION_EXTERNAL_LOGGER, on_log, s,
                            MHD_OPTION_SOCK_ADDR, sa,
                            MHD_OPTION_THREAD_POOL_SIZE, o->threads,
                            MHD_OPTION_CONNECTION_LIMIT, 512u,
                            MHD_OPTION_CONNECTION_TIMEOUT, 30u,
                            MHD_OPTION_NOTIFY_COMPLETED, on_done, s,
                            MHD_OPTION_END);
    if (!s->d) {
        err_io(e, NULL, 0, "cannot listen on %s port %u (address in use or not this machine's)", o->host,
               o->port);
        free(s);
        return NULL;
    }
    const union MHD_DaemonInfo *di = MHD_get_daemon_info(s->d, MHD_DAEMON_INFO_BIND_PORT);
    s->port = di ? di->port : o->port;
    return s;
}

unsigned serve_http_port(const serve_http_server *s)
{
    return s->port;
}

void serve_http_counts(const serve_http_server *s, unsigned long out[3])
{
    for (int i = 0; i < 3; i++)
        out[i] = atomic_load(&s->count[i]);
}

void serve_http_stop(serve_http_server *s)
{
    if (!s)
        return;
    MHD_stop_daemon(s->d);
    free(s);
}
