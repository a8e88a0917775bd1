/* html_text.h — writing text into HTML and SVG safely: every string that
 * came from the logs (ids, segments, class, member and model names) goes
 * through these, so it can only ever appear as text, never as markup. */
#ifndef CC_REPORT_HTML_TEXT_H
#define CC_REPORT_HTML_TEXT_H

#include <stdio.h>

/* Writes s with & < > " ' escaped as character references. NULL writes nothing. */
void cc_html_escape(FILE *f, const char *s);

/* The same, keeping at most max_chars characters (UTF-8 code points) and
 * ending with an ellipsis when something was cut. */
void cc_html_escape_short(FILE *f, const char *s, int max_chars);

/* The same, cutting from the middle instead ("member-…-name-03"), for
 * names that share a long prefix. */
void cc_html_escape_middle(FILE *f, const char *s, int max_chars);

/* Characters (UTF-8 code points) in s. */
int cc_html_chars(const char *s);

#endif
