/* cmd_models.c — `concord models`: what a database holds, model by model:
 * members, classes, days, events, labelled share, slices and baseline. */
#include <cjson/cJSON.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "date.h"
#include "store.h"
#include "store_catalog.h"
#include "store_slices.h"

const char help_models[] =
    "usage: concord models --db FILE|--store URL [--format text|json] [-o FILE]\n\n"
    "Lists the models the database holds: members, classes, the days with events\n"
    "(first..last), events, the labelled share, labels still waiting for their event,\n"
    "pruned days, the baseline, and the slices (one per segment, with their events;\n"
    "'(none)' holds the events without a segment, '(overflow)' those of segments past\n"
    "the model's slice limit). Reads one snapshot; writes nothing. A database of the\n"
    "previous schema is read as it is, without slices.\n\n"
    "  --format text|json  text for people (default), or one JSON object {\"models\": [...]}\n"
    "                      whose keys are described in the README\n"
    "  -o FILE             write there instead of standard output\n"
    CLI_HELP_STORE_CLUSTER
    "                   (a cluster has no pruned days and no waiting labels: both show 0)\n\n"
    "exit: 0 ok (also for a database without models), 2 usage, 3 file or database error\n";

static const char *const kind_names[] = {"segment", "none", "overflow", "pruned"};

static cJSON *date_json(int64_t day)
{
    char d[11];
    cc_format_date(day, d);
    return cJSON_CreateString(d);
}

/* One model's entry; NULL with err filled on a store error. */
static cJSON *model_json(cc_store *store, const char *name, cc_error *err)
{
    cc_model *m = NULL;
    cc_model_totals t;
    cc_pruned_range pr;
    cc_slice *list = NULL;
    int n = 0, has_base = 0, limit = 0, kept = cc_store_slices_kept(store);
    int64_t bfrom = 0, bto = 0;
    if (cc_store_model_get(store, name, &m, err) || cc_store_model_totals(store, m, &t, err) ||
        cc_store_pruned_range(store, m, INT64_MIN / 4, INT64_MAX / 4, &pr, err) ||
        cc_store_baseline_get(store, m, &has_base, &bfrom, &bto, err) ||
        (kept && (cc_store_slice_list(store, m, &list, &n, err) ||
                  cc_store_slice_limit_get(store, m, &limit, err)))) {
        cc_model_free(m);
        cc_slice_list_free(list, n);
        return NULL;
    }
    cJSON *o = cJSON_CreateObject(), *a;
    cJSON_AddStringToObject(o, "name", m->name);
    a = cJSON_AddArrayToObject(o, "members");
    for (int i = 0; i < m->m; i++)
        cJSON_AddItemToArray(a, cJSON_CreateString(m->members[i]));
    a = cJSON_AddArrayToObject(o, "classes");
    for (int i = 0; i < m->k; i++)
        cJSON_AddItemToArray(a, cJSON_CreateString(m->classes[i]));
    cJSON_AddNumberToObject(o, "days", t.days);
    cJSON_AddItemToObject(o, "first_day", t.days ? date_json(t.first_day) : cJSON_CreateNull());
    cJSON_AddItemToObject(o, "last_day", t.days ? date_json(t.last_day) : cJSON_CreateNull());
    cJSON_AddNumberToObject(o, "events", (double)t.events);
    cJSON_AddNumberToObject(o, "labeled", (double)t.labeled);
    if (t.events > 0)
        cJSON_AddNumberToObject(o, "labeled_share", (double)t.labeled / (double)t.events);
    else
        cJSON_AddNullToObject(o, "labeled_share");
    cJSON_AddNumberToObject(o, "pending_labels", (double)t.pending_labels);
    cJSON_AddNumberToObject(o, "pruned_days", pr.days);
    if (has_base) {
        cJSON *b = cJSON_AddObjectToObject(o, "baseline");
        cJSON_AddItemToObject(b, "from", date_json(bfrom));
        cJSON_AddItemToObject(b, "to", date_json(bto));
    } else {
        cJSON_AddNullToObject(o, "baseline");
    }
    if (kept) {
        cJSON_AddNumberToObject(o, "slice_limit", limit);
        a = cJSON_AddArrayToObject(o, "slices");
        for (int i = 0; i < n; i++) {
            cJSON *e = cJSON_CreateObject();
            cJSON_AddStringToObject(e, "segment", cc_slice_name(&list[i]));
            cJSON_AddStringToObject(e, "kind", kind_names[list[i].kind >= 0 && list[i].kind <= 3
                                                              ? list[i].kind : 0]);
            cJSON_AddNumberToObject(e, "events", (double)list[i].events);
            cJSON_AddNumberToObject(e, "labeled", (double)list[i].labeled);
            cJSON_AddItemToArray(a, e);
        }
    } else {
        cJSON_AddNullToObject(o, "slice_limit");
        cJSON_AddNullToObject(o, "slices");
    }
    cc_model_free(m);
    cc_slice_list_free(list, n);
    return o;
}

static const char *str(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsString(v) ? v->valuestring : NULL;
}

/* The same, "" when missing (for printing). */
static const char *text(const cJSON *o, const char *key)
{
    const char *s = str(o, key);
    return s ? s : "";
}

static double number(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(v) ? v->valuedouble : 0;
}

static void names_line(FILE *f, const char *label, const cJSON *arr)
{
    const cJSON *it;
    int i = 0;
    fprintf(f, "  %-9s%d:", label, cJSON_GetArraySize(arr));
    cJSON_ArrayForEach(it, arr)
        fprintf(f, "%s %s", i++ ? "," : "", it->valuestring);
    fputc('\n', f);
}

/* The text rendering, read back from the JSON entries (one source). */
static void model_text(FILE *f, const cJSON *o)
{
    fprintf(f, "model %s\n", text(o, "name"));
    names_line(f, "members", cJSON_GetObjectItemCaseSensitive(o, "members"));
    names_line(f, "classes", cJSON_GetObjectItemCaseSensitive(o, "classes"));
    if (str(o, "first_day"))
        fprintf(f, "  %-9s%s..%s (%.0f with events)\n", "days", text(o, "first_day"),
                text(o, "last_day"), number(o, "days"));
    else
        fprintf(f, "  %-9snone with events\n", "days");
    double ev = number(o, "events"), lab = number(o, "labeled");
    fprintf(f, "  %-9s%.0f, %.0f labelled", "events", ev, lab);
    if (ev > 0)
        fprintf(f, " (%.1f %%)", 100.0 * lab / ev);
    if (number(o, "pending_labels") > 0)
        fprintf(f, ", %.0f labels waiting for their event", number(o, "pending_labels"));
    fputc('\n', f);
    if (number(o, "pruned_days") > 0)
        fprintf(f, "  %-9s%.0f days (rows deleted, summaries kept)\n", "pruned",
                number(o, "pruned_days"));
    const cJSON *b = cJSON_GetObjectItemCaseSensitive(o, "baseline");
    if (cJSON_IsObject(b))
        fprintf(f, "  %-9s%s..%s\n", "baseline", text(b, "from"), text(b, "to"));
    else
        fprintf(f, "  %-9snone set\n", "baseline");
    const cJSON *sl = cJSON_GetObjectItemCaseSensitive(o, "slices"), *it;
    if (!cJSON_IsArray(sl)) {
        fprintf(f, "  %-9snot kept yet (a database of the previous schema; the first writing "
                   "command upgrades it)\n", "slices");
        return;
    }
    int named = 0;
    cJSON_ArrayForEach(it, sl)
        named += strcmp(text(it, "kind"), "segment") == 0;
    fprintf(f, "  %-9s%d (%d named, limit %.0f)\n", "slices", cJSON_GetArraySize(sl), named,
            number(o, "slice_limit"));
    cJSON_ArrayForEach(it, sl)
        fprintf(f, "    %-24s %10.0f events %10.0f labelled\n", text(it, "segment"),
                number(it, "events"), number(it, "labeled"));
}

int cmd_models(int argc, char **argv)
{
    cli_opt opts[] = {CLI_STORE_OPTS, {"format", 0, 1, NULL}, {"output", 'o', 1, NULL}};
    int n_opts = (int)(sizeof opts / sizeof *opts), n_pos, help;
    char *pos[64];
    if (argc > 64 || cli_parse(argc, argv, opts, n_opts, pos, &n_pos, &help, "models"))
        return EXIT_USAGE;
    if (help) {
        fputs(help_models, stdout);
        return EXIT_OK;
    }
    const char *db, *url, *format = cli_get(opts, n_opts, "format");
    if (cli_store_name("models", opts, n_opts, CLI_STORE_CLUSTER, &db, &url))
        return EXIT_USAGE;
    if (n_pos)
        return cli_usage("models", "unexpected argument '%s'", pos[0]);
    int json = format && strcmp(format, "json") == 0;
    if (format && !json && strcmp(format, "text") != 0)
        return cli_usage("models", "--format must be text or json, not '%s'", format);

    cc_error err = CC_ERROR_INIT;
    cc_store *store = NULL;
    char **names = NULL;
    int n = 0, rc = EXIT_OK;
    if (cli_store_open_named(db, url, CC_STORE_READONLY, &store, &err) ||
        cc_store_model_list(store, &names, &n, &err)) {
        rc = cli_fail(&err);
        cc_store_close(store);
        return rc;
    }
    cJSON *root = cJSON_CreateObject(), *arr = cJSON_AddArrayToObject(root, "models");
    for (int i = 0; i < n && rc == EXIT_OK; i++) {
        cJSON *o = names[i] ? model_json(store, names[i], &err) : NULL;
        if (!o)
            rc = names[i] ? cli_fail(&err) : EXIT_IO;
        else
            cJSON_AddItemToArray(arr, o);
    }
    char *text = NULL;
    if (rc == EXIT_OK) {
        if (json) {
            text = cJSON_Print(root);
        } else {
            size_t len = 0;
            FILE *f = open_memstream(&text, &len);
            const cJSON *it;
            int i = 0;
            if (f) {
                if (n == 0)
                    fprintf(f, "no models in %s\n", url ? url : db);
                cJSON_ArrayForEach(it, arr) {
                    if (i++)
                        fputc('\n', f);
                    model_text(f, it);
                }
                if (fclose(f) != 0) {
                    free(text);
                    text = NULL;
                }
            }
        }
        if (!text) {
            fprintf(stderr, "concord models: out of memory\n");
            rc = EXIT_IO;
        } else {
            rc = cli_write_output("models", cli_get(opts, n_opts, "output"), text,
                                  json ? CLI_OUT_NEWLINE : CLI_OUT_TEXT);
        }
    }
    free(text);
    cJSON_Delete(root);
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    cc_store_close(store);
    return rc;
}
