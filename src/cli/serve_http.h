/* serve_http.h -- the HTTP side of `vecsift serve`, over Debian's
 * libmicrohttpd: listen, read a whole request body (up to a limit), hand
 * the request to one callback, send its JSON answer.  It knows nothing of
 * models or tickets (serve_api.c does), and never logs request bodies.
 * Private to src/cli.
 */
#ifndef VECSIFT_CLI_SERVE_HTTP_H
#define VECSIFT_CLI_SERVE_HTTP_H

#include <stddef.h>

struct err;

/* One request, complete.  Everything is borrowed for the callback's call. */
struct serve_http_request {
    const char *method;     /* "GET", "POST", ... */
    const char *path;       /* without the query string */
    const char *ctype;      /* Content-Type header or NULL */
    const char *body;       /* NUL-terminated copy of the body ("" when none) */
    size_t len;
};

/* The callback's answer: a status and a JSON body the HTTP layer frees
 * (allocated with xmalloc or cJSON_Print*), and for 405 the Allow value. */
struct serve_http_reply {
    unsigned status;
    char *body;
    const char *allow;
};

typedef void (*serve_http_handler)(void *ctx, const struct serve_http_request *rq, struct serve_http_reply *out);

struct serve_http_options {
    const char *host;       /* numeric IPv4 or IPv6 address */
    unsigned port;          /* 0: any free port (see serve_http_port) */
    size_t max_body;        /* larger bodies get 413 without reaching 'fn' */
    unsigned threads;       /* threads answering requests */
    serve_http_handler fn;
    void *ctx;
};

typedef struct serve_http_server serve_http_server;

/* Parse "HOST:PORT", "[V6]:PORT" or ":PORT" (host 127.0.0.1) into host
 * (a new string) and port.  Returns 0, or -1 with 'e' naming 'spec'. */
int serve_http_listen(const char *spec, char **host, unsigned *port, struct err *e);

/* Bind and start answering on threads of its own.  Returns the server, or
 * NULL with 'e' set (address in use, not a numeric address ...). */
serve_http_server *serve_http_start(const struct serve_http_options *o, struct err *e);

/* The port actually bound (useful after port 0). */
unsigned serve_http_port(const serve_http_server *s);

/* Requests answered so far by status class: [0] 2xx, [1] 4xx, [2] 5xx. */
void serve_http_counts(const serve_http_server *s, unsigned long out[3]);

/* Stop accepting, let requests being answered finish, free everything.
 * NULL-safe. */
void serve_http_stop(serve_http_server *s);

/* A JSON error body {"error": {"status": S, "message": M}} into 'out'. */
void serve_http_error(struct serve_http_reply *out, unsigned status, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

#endif
