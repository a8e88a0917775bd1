/* paths.c — the metric paths rules may name: the figure registry plus the
 * figures only alerts derive. */
#include "paths.h"

#include <string.h>

static const char *const derived[] = {"labels.age_days"};
#define N_DERIVED ((int)(sizeof derived / sizeof *derived))

int cc_paths_count(void) { return cc_figures_count() + N_DERIVED; }

const char *cc_paths_name(int i)
{
    return i < cc_figures_count() ? cc_figures_get(i)->path : derived[i - cc_figures_count()];
}

int cc_paths_lookup(const char *path, cc_path_info *out)
{
    memset(out, 0, sizeof *out);
    const cc_figure *f = cc_figures_find(path);
    if (f) {
        out->kind = f->tracked ? CC_PATH_TRACKED : CC_PATH_REPORT;
        out->fig = f;
        out->scope = f->scope;
        out->needs_labels = f->needs_labels;
        out->what = f->what;
        return 0;
    }
    if (strcmp(path, "labels.age_days") == 0) {
        out->kind = CC_PATH_DERIVED;
        out->scope = CC_SCOPE_WINDOW;
        out->what = "label age in days";
        return 0;
    }
    return -1;
}
