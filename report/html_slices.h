/* html_slices.h — the HTML page's slice section (report_html.c calls it):
 * a table of the model's slices over the page's windows, and small daily
 * charts per slice of the figures that differ most between slices. */
#ifndef CC_REPORT_HTML_SLICES_H
#define CC_REPORT_HTML_SLICES_H

#include <stdio.h>

#include "report.h"

/* 1 when the page has rows per slice to show (a report with by_segment,
 * two slices or more, at least one window). */
int cc_html_slices_shown(const cc_report_page *pg);

/* Writes <section id="slices"> for the page (nothing when not shown), from
 * the numbers page_inputs.c kept of each window's slice rows. x_labels: the
 * windows' labels, x_label the axis name. Slice names are escaped. */
void cc_html_slices_section(FILE *f, const cc_report_page *pg, const char *const *x_labels,
                            const char *x_label);

#endif
