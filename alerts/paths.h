/* paths.h — the metric paths a rule may name: the report's tracked figures
 * (they have a baseline mean and spread, so both fixed bounds and sigma
 * conditions work), other numbers of the report's window JSON (fixed bounds
 * only), and a few figures derived for alerts (fixed bounds only). */
#ifndef CC_ALERTS_PATHS_H
#define CC_ALERTS_PATHS_H

typedef enum cc_path_kind {
    CC_PATH_TRACKED,   /* report/tracked.h figure: value and baseline stats */
    CC_PATH_REPORT,    /* a number in the window's JSON, read by path */
    CC_PATH_DERIVED,   /* computed for alerts: events, labeled, labels.age_days */
} cc_path_kind;

typedef struct cc_path_info {
    cc_path_kind kind;
    int tracked;        /* index into report/tracked.h for CC_PATH_TRACKED, else -1 */
    int needs_labels;   /* undefined without labelled events */
    const char *what;   /* a few words for sentences ("mutual information") */
} cc_path_info;

/* 0 and *out when path is allowed, -1 otherwise. */
int cc_paths_lookup(const char *path, cc_path_info *out);

/* Every allowed path, for help texts and error messages. */
int cc_paths_count(void);
const char *cc_paths_name(int i);

#endif
