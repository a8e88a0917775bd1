/* publisher.c — the publishing thread of follow and serve (publisher.h). */
#include "publisher.h"

#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

struct cc_publisher {
    cc_publisher_opts o;
    pthread_t t;
    int started;
    atomic_int quit;
    atomic_llong poked;         /* commits told so far */
    pthread_mutex_t mu;         /* guards st */
    cc_publisher_state st;
    int64_t done;               /* poked value the last successful run covered */
    cc_store *store;
};

static int64_t mono_ms(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

static void note(cc_publisher *p, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(cc_publisher *p, const char *fmt, ...)
{
    char msg[1200];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (p->o.on_note)
        p->o.on_note(p->o.ctx, msg);
}

/* One run covering every commit told before it began; 0 when it succeeded. */
static int run_once(cc_publisher *p)
{
    int64_t upto = atomic_load(&p->poked);
    cc_error err = CC_ERROR_INIT;
    int rc = 0;
    if (!p->store) {
        cc_store_opts so = CC_STORE_OPTS_INIT;
        so.wait_ms = p->o.wait_ms;
        rc = cc_store_open_with(&p->store, p->o.db_path, &so, &err);
    }
    if (!rc)
        rc = p->o.publish(p->o.publish_ctx, p->store, &err);
    pthread_mutex_lock(&p->mu);
    p->st.runs++;
    if (rc) {
        p->st.failures++;
        p->st.consecutive_failures++;
    } else {
        if (p->st.consecutive_failures)
            note(p, "publish: caught up after %lld failed run%s",
                 (long long)p->st.consecutive_failures,
                 p->st.consecutive_failures == 1 ? "" : "s");
        p->st.consecutive_failures = 0;
        p->st.last_ok_unix = (int64_t)time(NULL);
        p->done = upto;
    }
    p->st.pending = atomic_load(&p->poked) - p->done;
    pthread_mutex_unlock(&p->mu);
    if (rc)
        note(p, "publish failed: %s; ingesting goes on into the local store, and the next "
                "publish sends what is missing", err.msg);
    return rc;
}

static void *publisher_main(void *arg)
{
    cc_publisher *p = arg;
    int pause = p->o.pause_min_ms;
    int64_t next_try = 0;
    while (!atomic_load(&p->quit)) {
        if (atomic_load(&p->poked) != p->done && mono_ms() >= next_try) {
            if (run_once(p)) {
                next_try = mono_ms() + pause;
                pause = pause >= p->o.pause_max_ms / 2 ? p->o.pause_max_ms : pause * 2;
            } else {
                pause = p->o.pause_min_ms;
                next_try = 0;
            }
        }
        nanosleep(&(struct timespec){0, 100000000L}, NULL);
    }
    if (atomic_load(&p->poked) != p->done && run_once(p))
        note(p, "publish: stopping with commits not yet published; the next publish "
                "(a restart with --publish, or concord publish) sends them");
    cc_store_close(p->store);
    p->store = NULL;
    return NULL;
}

int cc_publisher_start(cc_publisher **out, const cc_publisher_opts *o, cc_error *err)
{
    *out = NULL;
    if (!o->publish || !o->db_path)
        return cc_error_set(err, CC_EUSAGE, "the publisher needs a store and a publish hook");
    cc_publisher *p = calloc(1, sizeof *p);
    if (!p)
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    p->o = *o;
    if (p->o.pause_min_ms <= 0)
        p->o.pause_min_ms = 500;
    if (p->o.pause_max_ms < p->o.pause_min_ms)
        p->o.pause_max_ms = p->o.pause_min_ms;
    pthread_mutex_init(&p->mu, NULL);
    if (pthread_create(&p->t, NULL, publisher_main, p) != 0) {
        pthread_mutex_destroy(&p->mu);
        free(p);
        return cc_error_set(err, CC_EIO, "cannot start the publishing thread");
    }
    p->started = 1;
    *out = p;
    return 0;
}

void cc_publisher_poke(cc_publisher *p)
{
    if (p)
        atomic_fetch_add(&p->poked, 1);
}

void cc_publisher_poke_to(cc_publisher *p, int64_t n)
{
    if (!p)
        return;
    long long cur = atomic_load(&p->poked);
    while (cur < n && !atomic_compare_exchange_weak(&p->poked, &cur, (long long)n))
        ;
}

void cc_publisher_state_get(cc_publisher *p, cc_publisher_state *out)
{
    pthread_mutex_lock(&p->mu);
    *out = p->st;
    out->pending = atomic_load(&p->poked) - p->done;
    pthread_mutex_unlock(&p->mu);
}

void cc_publisher_stop(cc_publisher *p, cc_publisher_state *final)
{
    if (p->started) {
        atomic_store(&p->quit, 1);
        pthread_join(p->t, NULL);
        p->started = 0;
    }
    if (final)
        cc_publisher_state_get(p, final);
}

void cc_publisher_free(cc_publisher *p)
{
    if (!p)
        return;
    cc_publisher_stop(p, NULL);
    pthread_mutex_destroy(&p->mu);
    free(p);
}
