/* ch_client.h — a small client for ClickHouse's HTTP interface (libcurl
 * only): queries, inserts with a RowBinary body, and the server's error
 * text turned into "HTTP status: Code N: message". Any answer other than
 * 200 is a failure; skip_unavailable_shards is never set, so a query over a
 * Distributed table with a shard down fails instead of answering with half
 * the rows. Tested against ClickHouse 18.16.1 (Debian 12). */
#ifndef CC_CLUSTER_CH_CLIENT_H
#define CC_CLUSTER_CH_CLIENT_H

#include <stddef.h>
#include <stdint.h>

#include "error.h"

typedef struct cc_ch cc_ch;

/* A growing byte buffer (bodies going out, answers coming back). */
typedef struct cc_buf {
    unsigned char *p;
    size_t len, cap;
    int oom;                    /* an append ran out of memory */
} cc_buf;
#define CC_BUF_INIT {NULL, 0, 0, 0}
void cc_buf_free(cc_buf *b);
void cc_buf_put(cc_buf *b, const void *data, size_t n);
/* RowBinary encodings (little-endian integers, LEB128 lengths). */
void cc_buf_varint(cc_buf *b, uint64_t v);
void cc_buf_string(cc_buf *b, const char *s, size_t n);
void cc_buf_i64(cc_buf *b, int64_t v);
void cc_buf_u64(cc_buf *b, uint64_t v);
void cc_buf_i32(cc_buf *b, int32_t v);
void cc_buf_u32(cc_buf *b, uint32_t v);
void cc_buf_u8(cc_buf *b, uint8_t v);

/* Reading RowBinary back: each returns 0, or -1 past the end. */
typedef struct cc_rb {
    const unsigned char *p, *end;
} cc_rb;
int cc_rb_varint(cc_rb *r, uint64_t *v);
int cc_rb_string(cc_rb *r, const char **s, size_t *n);
int cc_rb_i64(cc_rb *r, int64_t *v);
int cc_rb_u64(cc_rb *r, uint64_t *v);
int cc_rb_i32(cc_rb *r, int32_t *v);
int cc_rb_u32(cc_rb *r, uint32_t *v);
int cc_rb_u8(cc_rb *r, uint8_t *v);
int cc_rb_f32(cc_rb *r, float *v);

/* Opens a client for "clickhouse://HOST:PORT/DATABASE" (HTTP port; the
 * database name letters, digits and '_'). The user and password come from
 * CONCORD_CH_USER and CONCORD_CH_PASSWORD when set, never from the URL. The
 * cluster name of the Distributed tables is CONCORD_CH_CLUSTER, default
 * "concord". Nothing is sent until the first query. */
int cc_ch_open(cc_ch **out, const char *url, cc_error *err);
void cc_ch_close(cc_ch *c);
const char *cc_ch_database(const cc_ch *c);
const char *cc_ch_cluster(const cc_ch *c);
/* "HOST:PORT", for messages. */
const char *cc_ch_where(const cc_ch *c);

/* Runs sql (any statement; a SELECT should end in FORMAT RowBinary or
 * TabSeparated) and puts the answer's body in *out when out is not NULL.
 * With body (insert data), sql goes in the URL and body is the request
 * body. Inserts into Distributed tables are synchronous
 * (insert_distributed_sync = 1), so a shard that is down fails the insert.
 * Errors name the server and, for a non-200 answer, read
 * "HTTP status: Code N: message". */
int cc_ch_query(cc_ch *c, const char *sql, const cc_buf *body, cc_buf *out, cc_error *err);

/* HTTP status of the last answer (0 when the server was not reached). */
long cc_ch_last_status(const cc_ch *c);

/* SQL string literal of s (quotes and backslashes escaped) appended to b,
 * NUL-terminated. */
void cc_ch_quote(cc_buf *b, const char *s);

#endif
