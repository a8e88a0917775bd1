/* packhouse.c — generator of the invented fruit-grading scenario.
 *
 * Each piece of fruit has a true grade drawn from the day's grade mix. The
 * camera image makes it look like a blurred grade vector a ~ Dirichlet around
 * the true grade (with leakage to neighbouring grades). Each member sees the
 * fruit its own way: b_m ~ Dirichlet around the true grade, and answers
 * p_m ~ Dirichlet(gamma (w a + (1-w) b_m)), sharpened as p^t / sum p^t.
 * Incidents change gamma, w and the grade mix. On the broken-member days one
 * member's answer is replaced by an old model's: it leans one grade lower on
 * about half of the fruit and is less sure; its draws come from a second
 * generator, so every other number of the scenario stays as it was. On the
 * line-fog days the camera of one packing line (segment "line-2") fogs: the
 * members' answers for that line's fruit are drawn again, as on the
 * whole-house fog days for a share of that line's fruit (LINE_FOG_SHARE;
 * the fog comes and goes), from a third generator, so the other lines and
 * every other incident keep their numbers. Diluted by the two clear lines,
 * the whole house barely moves.
 * Random numbers: GSL's mt19937 and gsl_ran_dirichlet. */
#include "packhouse.h"

#include <errno.h>
#include <math.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <stdio.h>
#include <string.h>

#include "date.h"
#include "out.h"

#define K 6
#define M 5

static const double base_mix[K] = {0.10, 0.25, 0.30, 0.20, 0.10, 0.05};
static const double late_mix[K] = {0.03, 0.10, 0.20, 0.30, 0.22, 0.15};

/* The old model of the broken-member incident: share of fruit it sees one
 * grade lower, weight of the shared view, concentration and sharpening. */
#define OLD_LEAN 0.3
#define OLD_W 0.5
#define OLD_GAMMA 25.0
#define OLD_SHARPEN 2.4

/* The fogged camera: blur of the shared view, concentration and weight of
 * the shared view in each member's answer (the whole-house fog and the
 * one-line fog use the same). */
#define FOG_BLUR 4.0
#define FOG_GAMMA 3.0
#define FOG_W 0.3

/* Share of the fogged line's fruit photographed through the fog. */
#define LINE_FOG_SHARE 0.25

/* Dirichlet parameter centred on grade y with leakage to its neighbours. */
static void around(double *alpha, int y, double strength, double leak)
{
    double sum = 0.0;
    for (int c = 0; c < K; c++) {
        int dist = c > y ? c - y : y - c;
        alpha[c] = dist == 0 ? 1.0 : dist == 1 ? leak : leak * 0.15;
        sum += alpha[c];
    }
    for (int c = 0; c < K; c++)
        alpha[c] = strength * alpha[c] / sum + 0.02;
}

/* p <- p^t / sum p^t: members trained to be confident (t > 1). */
static void sharpen(double *p, double t)
{
    double sum = 0.0;
    for (int c = 0; c < K; c++)
        sum += (p[c] = pow(p[c], t));
    for (int c = 0; c < K; c++)
        p[c] /= sum;
}

/* Answers of the M members for fruit of true grade y under a fogged camera,
 * every draw from g. */
static void fogged_answers(gsl_rng *g, int y, double p[M][K])
{
    double alpha[K], a[K], b[K], mixed[K];
    around(alpha, y, FOG_BLUR, 0.45);
    gsl_ran_dirichlet(g, K, alpha, a);
    for (int m = 0; m < M; m++) {
        around(alpha, y, 8.0, 0.35);
        gsl_ran_dirichlet(g, K, alpha, b);
        for (int c = 0; c < K; c++)
            mixed[c] = FOG_GAMMA * (FOG_W * a[c] + (1.0 - FOG_W) * b[c]) + 1e-3;
        gsl_ran_dirichlet(g, K, mixed, p[m]);
        sharpen(p[m], 2.4);
    }
}

static int draw_grade(gsl_rng *r, const double *mix)
{
    double u = gsl_rng_uniform(r), acc = 0.0;
    for (int c = 0; c < K - 1; c++) {
        acc += mix[c];
        if (u < acc)
            return c;
    }
    return K - 1;
}

int cc_demo_generate(const char *events_path, const char *labels_path, const cc_demo_opts *o,
                     cc_demo_incidents *inc, cc_error *err)
{
    cc_out *ev_out, *lab_out;
    if (cc_out_open(&ev_out, events_path, 0, err))
        return -CC_EIO;
    if (cc_out_open(&lab_out, labels_path, 0, err)) {
        cc_out_discard(ev_out);
        return -CC_EIO;
    }
    FILE *ev = cc_out_stream(ev_out), *lab = cc_out_stream(lab_out);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937), *old = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng *fog_rng = gsl_rng_alloc(gsl_rng_mt19937); /* the one-line fog */
    if (!r || !old || !fog_rng) {
        gsl_rng_free(r);
        gsl_rng_free(old);
        gsl_rng_free(fog_rng);
        cc_out_discard(ev_out);
        cc_out_discard(lab_out);
        return cc_error_set(err, CC_ENOMEM, "out of memory");
    }
    gsl_rng_set(r, (unsigned long)o->seed);
    gsl_rng_set(old, (unsigned long)o->seed ^ 0x5eedUL);
    gsl_rng_set(fog_rng, (unsigned long)o->seed ^ 0xf09UL);
    static const char *const grade_names[K] = {"premium", "extra",  "class-1",
                                               "class-2", "juice",  "cull"};

    memset(inc, 0, sizeof *inc);
    inc->fog_from = 9, inc->fog_to = 11;
    inc->mix_from = 16, inc->mix_to = o->days;
    inc->retrain_from = 23, inc->retrain_to = o->days;
    inc->broken_from = 14, inc->broken_to = 15, inc->broken_member = 3; /* "size" */
    inc->line_fog_from = 19, inc->line_fog_to = 20, inc->line_fog_line = 2;

    double alpha[K], a[K], b[K], mixed[K], p[M][K];
    for (int day = 1; day <= o->days; day++) {
        int fog = day >= inc->fog_from && day <= inc->fog_to;
        int late = day >= inc->mix_from && day <= inc->mix_to;
        int copies = day >= inc->retrain_from && day <= inc->retrain_to;
        int broken = day >= inc->broken_from && day <= inc->broken_to;
        int line_fog = day >= inc->line_fog_from && day <= inc->line_fog_to;
        int64_t t0 = (o->first_day + day - 1) * 86400;
        for (int i = 0; i < o->per_day; i++) {
            int y = draw_grade(r, late ? late_mix : base_mix);
            around(alpha, y, fog ? FOG_BLUR : 9.0, 0.45);
            gsl_ran_dirichlet(r, K, alpha, a);
            for (int m = 0; m < M; m++) {
                double gamma = 25.0, w = 0.5;
                if (copies) {
                    gamma = 600.0;
                    w = 0.98;
                } else if (fog) {
                    gamma = FOG_GAMMA;
                    w = FOG_W;
                }
                around(alpha, y, 8.0, 0.35);
                gsl_ran_dirichlet(r, K, alpha, b);
                for (int c = 0; c < K; c++)
                    mixed[c] = gamma * (w * a[c] + (1.0 - w) * b[c]) + 1e-3;
                gsl_ran_dirichlet(r, K, mixed, p[m]);
                sharpen(p[m], copies ? 2.0 : 2.4);
                if (broken && m == inc->broken_member) {
                    /* the old model: on a share of the fruit it settles on a
                     * neighbouring grade as firmly as the others answer */
                    int seen = y;
                    if (gsl_rng_uniform(old) < OLD_LEAN)
                        seen = y == 0 ? 1 : y == K - 1 ? K - 2
                                      : y + (gsl_rng_uniform(old) < 0.5 ? -1 : 1);
                    around(alpha, seen, 8.0, 0.35);
                    gsl_ran_dirichlet(old, K, alpha, b);
                    for (int c = 0; c < K; c++)
                        mixed[c] = OLD_GAMMA * (OLD_W * a[c] + (1.0 - OLD_W) * b[c]) + 1e-3;
                    gsl_ran_dirichlet(old, K, mixed, p[m]);
                    sharpen(p[m], OLD_SHARPEN);
                }
            }
            int line = 1 + i % 3;
            if (line_fog && line == inc->line_fog_line && gsl_rng_uniform(fog_rng) < LINE_FOG_SHARE)
                fogged_answers(fog_rng, y, p);
            int64_t ts = t0 + (int64_t)((double)i * 86400.0 / o->per_day);
            int y_, mo, d;
            cc_civil_from_days(cc_day_of_unix(ts), &y_, &mo, &d);
            int sec = (int)(ts % 86400);
            fprintf(ev, "{\"id\":\"d%02d-%05d\",\"ts\":\"%04d-%02d-%02dT%02d:%02d:%02dZ\","
                        "\"segment\":\"line-%d\",\"probs\":[",
                    day, i, y_, mo, d, sec / 3600, sec / 60 % 60, sec % 60, line);
            for (int m = 0; m < M; m++) {
                fputc('[', ev);
                for (int c = 0; c < K; c++)
                    fprintf(ev, "%s%.5f", c ? "," : "", p[m][c]);
                fputs(m + 1 < M ? "]," : "]", ev);
            }
            fputc(']', ev);
            double u = gsl_rng_uniform(r);
            if (u < o->label_share / 2) {
                fprintf(ev, ",\"label\":%d", y); /* checked at the line at once */
                inc->inline_labels++;
            } else if (u < o->label_share) {
                /* arrives later; every other one by class name */
                if (i % 2)
                    fprintf(lab, "{\"id\":\"d%02d-%05d\",\"label\":\"%s\"}\n", day, i,
                            grade_names[y]);
                else
                    fprintf(lab, "{\"id\":\"d%02d-%05d\",\"label\":%d}\n", day, i, y);
                inc->delayed_labels++;
            }
            fputs("}\n", ev);
            inc->events++;
        }
    }
    gsl_rng_free(r);
    gsl_rng_free(old);
    gsl_rng_free(fog_rng);
    if (cc_out_commit(ev_out, err)) {
        cc_out_discard(lab_out);
        return -CC_EIO;
    }
    return cc_out_commit(lab_out, err);
}
