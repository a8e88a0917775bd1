/* slice_names.c — a slice's shown name, finding a slice by name, freeing a
 * list of slices: the same for every store backend (store_slices.h). */
#include <stdlib.h>
#include <string.h>

#include "store_slices.h"

static const char *const special_names[] = {
    [CC_SLICE_SEGMENT] = "",
    [CC_SLICE_NONE] = "(none)",
    [CC_SLICE_OVERFLOW] = "(overflow)",
    [CC_SLICE_PRUNED] = "(pruned, unsliced)",
};

const char *cc_slice_name(const cc_slice *sl)
{
    if (sl->kind == CC_SLICE_SEGMENT)
        return sl->segment;
    if (sl->kind > CC_SLICE_SEGMENT && sl->kind <= CC_SLICE_PRUNED)
        return special_names[sl->kind];
    return "?";
}

int cc_slice_find(const cc_slice *list, int n, const char *name)
{
    for (int i = 0; i < n; i++)
        if (list[i].kind == CC_SLICE_SEGMENT && strcmp(list[i].segment, name) == 0)
            return i;
    for (int i = 0; i < n; i++)
        if (list[i].kind != CC_SLICE_SEGMENT && strcmp(cc_slice_name(&list[i]), name) == 0)
            return i;
    return -1;
}

void cc_slice_list_free(cc_slice *list, int n)
{
    for (int i = 0; list && i < n; i++)
        free(list[i].segment);
    free(list);
}
