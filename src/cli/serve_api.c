/* serve_api.c -- the endpoints of `vecsift serve` (serve_api.h).
 *
 *   POST /route    one ticket {"id": ..., FIELD: "text", ...}, or a batch
 *                  {"tickets": [ticket, ...]}; FIELD are the model's text
 *                  columns, joined as predict joins them.  The answer has
 *                  predict's columns as fields, numbers as predict prints
 *                  them.
 *   GET  /health   the model's fingerprint, labels, text fields, reloads.
 *
 * Every request is checked whole before any ticket is routed; a bad one
 * gets a 4xx with {"error": {"status", "message"}} and routes nothing.
 * Messages name the ticket and field, never their text.
 */
#include "serve_api.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>

#include <cjson/cJSON.h>

#include "vecsift/err.h"
#include "vecsift/route.h"
#include "vecsift/xalloc.h"
#include "predict_fields.h"

static void reply_json(struct serve_http_reply *out, unsigned status, cJSON *root)
{
    char *s = cJSON_PrintUnformatted(root);
    cJSON_Delete(root);
    if (!s)
        abort(); /* cJSON's allocation failed: out of memory, as xalloc does */
    size_t n = strlen(s);
    out->body = xmalloc(n + 2);
    memcpy(out->body, s, n);
    memcpy(out->body + n, "\n", 2);
    cJSON_free(s);
    out->status = status;
}

/* "application/json", any case, optionally followed by parameters. */
static int is_json_type(const char *ct)
{
    if (!ct)
        return 0;
    while (*ct == ' ')
        ct++;
    size_t n = strlen("application/json");
    if (strncasecmp(ct, "application/json", n) != 0)
        return 0;
    ct += n;
    while (*ct == ' ')
        ct++;
    return *ct == '\0' || *ct == ';';
}

static cJSON *number4(double x)
{
    char num[32];
    snprintf(num, sizeof num, "%.4f", x);
    return cJSON_CreateRaw(num);
}

/* Check one ticket: an object whose members are "id" (string or number)
 * and the model's text fields (strings, all present).  Returns 0 or -1
 * with the message in 'out'. */
static int check_ticket(const struct served *m, const cJSON *t, size_t i, int batch, struct serve_http_reply *out)
{
    char where[48] = "the ticket";
    if (batch)
        snprintf(where, sizeof where, "ticket %zu", i + 1);
    if (!cJSON_IsObject(t)) {
        serve_http_error(out, 422, "%s is not a JSON object", where);
        return -1;
    }
    for (const cJSON *f = t->child; f; f = f->next) {
        if (strcmp(f->string, "id") == 0) {
            if (!cJSON_IsString(f) && !cJSON_IsNumber(f)) {
                serve_http_error(out, 422, "%s has a field 'id' that is neither a string nor a number", where);
                return -1;
            }
            continue;
        }
        size_t c = 0;
        while (c < m->m.ntext && strcmp(f->string, m->m.text_cols[c]) != 0)
            c++;
        if (c == m->m.ntext) {
            char known[256] = "";
            for (size_t q = 0, at = 0; q < m->m.ntext && at < sizeof known; q++)
                at += (size_t)snprintf(known + at, sizeof known - at, "%s'%s'", q ? ", " : "", m->m.text_cols[q]);
            serve_http_error(out, 422,
                             "%s has an unknown field '%.64s' (a ticket has 'id' and the model's text fields %s)",
                             where, f->string, known);
            return -1;
        }
        if (!cJSON_IsString(f)) {
            serve_http_error(out, 422, "%s has a field '%s' that is not a string", where, f->string);
            return -1;
        }
    }
    for (size_t c = 0; c < m->m.ntext; c++)
        if (!cJSON_GetObjectItemCaseSensitive(t, m->m.text_cols[c])) {
            serve_http_error(out, 422, "%s lacks the field '%s'", where, m->m.text_cols[c]);
            return -1;
        }
    return 0;
}

/* Scratch one request reuses from ticket to ticket. */
struct scratch {
    route_worker *w;
    const char **parts;     /* (ntext) */
    double *prob;           /* (K) */
    int *order;             /* (K) */
    struct route_result res;
    char *why;
    size_t whycap;
};

/* The answer for one checked ticket, or NULL with the message in 'out'.
 * Routed by the library's route_text, the call predict makes, and
 * formatted with predict's helpers (predict_fields.h). */
static cJSON *route_ticket(const struct serve_ctx *sc, const struct served *m, struct scratch *z, const cJSON *t,
                           size_t i, int batch, struct serve_http_reply *out)
{
    size_t nt = m->m.ntext, K = m->m.k;
    for (size_t c = 0; c < nt; c++)
        z->parts[c] = cJSON_GetObjectItemCaseSensitive(t, m->m.text_cols[c])->valuestring;
    struct err e = ERR_INIT;
    if (route_text(z->w, z->parts, nt, z->prob, &z->res, NULL, 0, &e) < 0) {
        if (batch)
            serve_http_error(out, 422, "ticket %zu: the text is not valid UTF-8 (%s)", i + 1, e.msg);
        else
            serve_http_error(out, 422, "the ticket's text is not valid UTF-8 (%s)", e.msg);
        return NULL;
    }
    const struct route_result *r = &z->res;
    cJSON *o = cJSON_CreateObject();
    const cJSON *id = cJSON_GetObjectItemCaseSensitive(t, "id");
    if (id)
        cJSON_AddItemToObject(o, "id", cJSON_Duplicate(id, 0));
    cJSON_AddStringToObject(o, "predicted", m->m.labels[r->label]);
    cJSON_AddItemToObject(o, "confidence", number4(r->confidence));
    cJSON_AddStringToObject(o, "route", r->review ? "review" : m->m.labels[r->label]);
    if (sc->st.top > 1) {
        predict_label_order(z->prob, K, z->order);
        for (size_t q = 1; q < sc->st.top; q++) {
            char key[48];
            snprintf(key, sizeof key, "label_%zu", q + 1);
            cJSON_AddItemToObject(o, key, q < K ? cJSON_CreateString(m->m.labels[z->order[q]]) : cJSON_CreateNull());
            snprintf(key, sizeof key, "confidence_%zu", q + 1);
            cJSON_AddItemToObject(o, key, q < K ? number4(z->prob[z->order[q]]) : cJSON_CreateNull());
        }
    }
    if (sc->st.explain) {
        predict_evidence(r, &z->why, &z->whycap);
        cJSON_AddStringToObject(o, "evidence", z->why);
    }
    return o;
}

static void route(struct serve_ctx *sc, const struct serve_http_request *rq, struct serve_http_reply *out, size_t *nt)
{
    if (!is_json_type(rq->ctype)) {
        serve_http_error(out, 415, "the body must be sent as 'Content-Type: application/json'");
        return;
    }
    /* Parsed here rather than by jsonv_parse: that accepts bytes after the
     * value, which a request must not have.
     * NEEDSWORK: cJSON 1.7.15 stores the last error position in a global
     * that every parse writes, so parses on several threads race on it
     * (we never read it: 'end' is our own).  A cJSON built with
     * thread-local errors, or a parser of our own, would remove the race. */
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithLengthOpts(rq->body, rq->len, &end, 0);
    if (root && end) {
        while (end < rq->body + rq->len && strchr(" \t\r\n", *end))
            end++;
        if (end != rq->body + rq->len) {
            cJSON_Delete(root);
            root = NULL;
        }
    }
    if (!root || memchr(rq->body, '\0', rq->len)) {
        long line = 1;
        const char *stop = end && end >= rq->body && end <= rq->body + rq->len ? end : rq->body;
        for (const char *p = rq->body; p < stop; p++)
            line += *p == '\n';
        serve_http_error(out, 400, "the body is not valid JSON (line %ld)", line);
        cJSON_Delete(root);
        return;
    }
    struct served *m = serve_model_get(&sc->slot);
    const cJSON *list = cJSON_GetObjectItemCaseSensitive(root, "tickets");
    int batch = cJSON_IsObject(root) && cJSON_IsArray(list);
    size_t n = batch ? (size_t)cJSON_GetArraySize(list) : 1;
    struct scratch z;
    memset(&z, 0, sizeof z);
    cJSON *res = NULL;
    if (batch && root->child->next) {
        serve_http_error(out, 422, "a batch holds only the field 'tickets'");
        goto done;
    }
    if (batch && n == 0) {
        serve_http_error(out, 422, "'tickets' is empty");
        goto done;
    }
    if (n > sc->max_batch) {
        serve_http_error(out, 413, "the batch has %zu tickets, more than the limit of %zu (--max-batch)", n,
                         sc->max_batch);
        goto done;
    }
    size_t i = 0;
    for (const cJSON *t = batch ? list->child : root; t; t = batch ? t->next : NULL, i++)
        if (check_ticket(m, t, i, batch, out) < 0)
            goto done;
    struct route_params rp = { m->cut, sc->st.explain };
    z.w = route_worker_new(&m->m, &rp);
    z.parts = xcalloc(m->m.ntext, sizeof *z.parts);
    z.prob = xcalloc(m->m.k, sizeof *z.prob);
    z.order = xcalloc(m->m.k, sizeof *z.order);
    res = batch ? cJSON_CreateArray() : NULL;
    i = 0;
    for (const cJSON *t = batch ? list->child : root; t; t = batch ? t->next : NULL, i++) {
        cJSON *o = route_ticket(sc, m, &z, t, i, batch, out);
        if (!o)
            goto done;
        if (!batch) {
            res = o;
            break;
        }
        cJSON_AddItemToArray(res, o);
    }
    if (batch) {
        cJSON *top = cJSON_CreateObject();
        cJSON_AddItemToObject(top, "results", res);
        res = top;
    }
    *nt = n;
    reply_json(out, 200, res);
    res = NULL;
done:
    cJSON_Delete(res);
    route_result_release(&z.res);
    route_worker_free(z.w);
    free(z.parts);
    free(z.prob);
    free(z.order);
    free(z.why);
    serve_model_put(m);
    cJSON_Delete(root);
}

static void health(struct serve_ctx *sc, struct serve_http_reply *out)
{
    struct served *m = serve_model_get(&sc->slot);
    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "status", "ok");
    cJSON *mo = cJSON_AddObjectToObject(root, "model");
    cJSON_AddStringToObject(mo, "path", sc->st.model_path);
    cJSON_AddStringToObject(mo, "fingerprint", m->fingerprint);
    cJSON_AddStringToObject(mo, "loaded", m->loaded);
    cJSON_AddItemToObject(mo, "labels", cJSON_CreateStringArray((const char *const *)m->m.labels, (int)m->m.k));
    cJSON_AddItemToObject(mo, "text_fields",
                          cJSON_CreateStringArray((const char *const *)m->m.text_cols, (int)m->m.ntext));
    cJSON_AddItemToObject(mo, "review_below", number4(m->cut));
    cJSON *lim = cJSON_AddObjectToObject(root, "limits");
    cJSON_AddNumberToObject(lim, "max_body", (double)sc->max_body);
    cJSON_AddNumberToObject(lim, "max_batch", (double)sc->max_batch);
    cJSON *rl = cJSON_AddObjectToObject(root, "reloads");
    cJSON_AddNumberToObject(rl, "done", (double)atomic_load(&sc->reloads));
    cJSON_AddNumberToObject(rl, "refused", (double)atomic_load(&sc->refused));
    if (sc->http) {
        unsigned long c[3];
        serve_http_counts(sc->http, c);
        cJSON *an = cJSON_AddObjectToObject(root, "answered");
        cJSON_AddNumberToObject(an, "ok", (double)c[0]);
        cJSON_AddNumberToObject(an, "refused", (double)c[1]);
        cJSON_AddNumberToObject(an, "failed", (double)c[2]);
    }
    serve_model_put(m);
    reply_json(out, 200, root);
}

void serve_handle(void *ctx, const struct serve_http_request *rq, struct serve_http_reply *out)
{
    struct serve_ctx *sc = ctx;
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    size_t nt = 0;
    const char *known = NULL;
    if (strcmp(rq->path, SERVE_PATH_ROUTE) == 0) {
        known = SERVE_PATH_ROUTE;
        if (strcmp(rq->method, "POST") != 0) {
            serve_http_error(out, 405, "%s takes POST", SERVE_PATH_ROUTE);
            out->allow = "POST";
        } else {
            route(sc, rq, out, &nt);
        }
    } else if (strcmp(rq->path, SERVE_PATH_HEALTH) == 0) {
        known = SERVE_PATH_HEALTH;
        if (strcmp(rq->method, "GET") != 0 && strcmp(rq->method, "HEAD") != 0) {
            serve_http_error(out, 405, "%s takes GET", SERVE_PATH_HEALTH);
            out->allow = "GET, HEAD";
        } else {
            health(sc, out);
        }
    } else {
        serve_http_error(out, 404, "no such endpoint: try POST %s or GET %s", SERVE_PATH_ROUTE, SERVE_PATH_HEALTH);
    }
    if (sc->log_requests) {
        clock_gettime(CLOCK_MONOTONIC, &t1);
        double ms = (double)(t1.tv_sec - t0.tv_sec) * 1e3 + (double)(t1.tv_nsec - t0.tv_nsec) / 1e6;
        /* the method and a known path only: a path or body may hold personal data */
        fprintf(stderr, "vecsift: serve: %.8s %s %u, %zu tickets, %.2f ms\n", rq->method,
                known ? known : "(other path)", out->status, nt, ms);
    }
}
