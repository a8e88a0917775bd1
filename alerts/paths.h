/* paths.h — the metric paths a rule may name: every figure of the registry
 * (report/figures.h; tracked ones have a baseline mean and spread, so both
 * fixed bounds and sigma conditions work; member and class figures need a
 * member or class scope), and one figure derived for alerts from the store
 * (labels.age_days, fixed bounds only). */
#ifndef CC_ALERTS_PATHS_H
#define CC_ALERTS_PATHS_H

#include "figures.h"

typedef enum cc_path_kind {
    CC_PATH_TRACKED,   /* a tracked figure: value and baseline stats */
    CC_PATH_REPORT,    /* a figure without baseline stats */
    CC_PATH_DERIVED,   /* computed for alerts: labels.age_days */
} cc_path_kind;

typedef struct cc_path_info {
    cc_path_kind kind;
    const cc_figure *fig;   /* NULL for derived paths */
    cc_figure_scope scope;
    int needs_labels;       /* undefined without labelled events */
    const char *what;       /* a few words for sentences ("mutual information") */
} cc_path_info;

/* 0 and *out when path is allowed, -1 otherwise. */
int cc_paths_lookup(const char *path, cc_path_info *out);

/* Every allowed path, for help texts and error messages. */
int cc_paths_count(void);
const char *cc_paths_name(int i);

#endif
