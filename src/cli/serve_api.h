/* serve_api.h -- the endpoints of `vecsift serve` (docs/serve.md): what a
 * request may hold, how it is checked, what the answer says.  Private to
 * src/cli; the HTTP layer is serve_http.h, the model serve_model.h.
 */
#ifndef VECSIFT_CLI_SERVE_API_H
#define VECSIFT_CLI_SERVE_API_H

#include <stdatomic.h>
#include <stddef.h>

#include "serve_http.h"
#include "serve_model.h"

#define SERVE_PATH_ROUTE "/route"
#define SERVE_PATH_HEALTH "/health"

struct serve_ctx {
    struct serve_slot slot;
    struct serve_settings st;
    size_t max_batch, max_body;
    int log_requests;       /* one line per request: method, path, status, tickets, time; never text */
    atomic_ulong reloads, refused;
    serve_http_server *http;      /* for the health endpoint's counts; may be NULL */
};

/* The serve_http_handler for every request; 'ctx' is a struct serve_ctx. */
void serve_handle(void *ctx, const struct serve_http_request *rq, struct serve_http_reply *out);

#endif
