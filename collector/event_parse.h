/* event_parse.h — one JSON Lines record (a prediction event, or a delayed
 * label) into a validated struct. Shape and value checks that need no model
 * happen here; M, K and class names are checked by the caller against the
 * model. */
#ifndef CC_COLLECTOR_EVENT_PARSE_H
#define CC_COLLECTOR_EVENT_PARSE_H

#include <stddef.h>
#include <stdint.h>

#define CC_ID_MAX 128
#define CC_SEGMENT_MAX 256
#define CC_ROW_SUM_TOL 1e-3

typedef struct cc_event {
    const char *id;          /* not NUL-terminated; valid until the next parse */
    int id_len;
    int64_t ts;              /* Unix seconds */
    const char *model;       /* NULL when absent */
    const char *segment;     /* NULL when absent */
    int segment_len;
    int m, k;
    const double *probs;     /* m*k row-major, softmaxed when logits were given */
    int label;               /* class index, -1 when absent or given by name */
    const char *label_name;  /* class name when the label was a string */
} cc_event;

typedef struct cc_label_line {
    const char *id;
    int id_len;
    const char *model;       /* NULL when absent */
    int label;               /* -1 when given by name */
    const char *label_name;
} cc_label_line;

typedef struct cc_parser cc_parser;

/* Event times are accepted from CC_TS_FIRST_YEAR-01-01 to the end of
 * CC_TS_LAST_YEAR (UTC) unless cc_parser_ts_range says otherwise: a wide but
 * finite window, so a unit mistake (milliseconds, a zero) is refused rather
 * than stored as a day centuries away. */
#define CC_TS_FIRST_YEAR 2000
#define CC_TS_LAST_YEAR 2099

cc_parser *cc_parser_create(void);
void cc_parser_free(cc_parser *p);

/* Sets the accepted event times, Unix seconds, both ends inclusive. */
void cc_parser_ts_range(cc_parser *p, int64_t first, int64_t last);

/* Parses one line (without its newline). Returns 0, or -1 with a reason that
 * names the field in why (NUL-terminated, at most why_len bytes). The
 * strings id, model, segment and a label's class name must be valid UTF-8
 * without NUL characters. */
int cc_parse_event(cc_parser *p, const char *line, size_t len, cc_event *out, char *why,
                   size_t why_len);
int cc_parse_label(cc_parser *p, const char *line, size_t len, cc_label_line *out, char *why,
                   size_t why_len);

/* Numerically stable softmax of one row, in place (subtracts the maximum). */
void cc_softmax(double *x, int k);

#endif
