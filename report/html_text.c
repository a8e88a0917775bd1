/* html_text.c — escaping for HTML text and attribute values (see html_text.h). */
#include "html_text.h"

static void escape_n(FILE *f, const char *s, int max_chars)
{
    int chars = 0;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        if ((*p & 0xC0) != 0x80 && max_chars >= 0 && chars++ == max_chars) {
            fputs("\xE2\x80\xA6", f);
            return;
        }
        switch (*p) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        case '\'': fputs("&#39;", f); break;
        default: fputc(*p, f);
        }
    }
}

void cc_html_escape(FILE *f, const char *s)
{
    if (s)
        escape_n(f, s, -1);
}

void cc_html_escape_short(FILE *f, const char *s, int max_chars)
{
    if (s)
        escape_n(f, s, cc_html_chars(s) > max_chars ? max_chars - 1 : -1);
}

void cc_html_escape_middle(FILE *f, const char *s, int max_chars)
{
    if (!s)
        return;
    int n = cc_html_chars(s);
    if (n <= max_chars || max_chars < 3) {
        escape_n(f, s, n <= max_chars ? -1 : max_chars - 1);
        return;
    }
    int head = (max_chars - 1) / 2, skip = n - (max_chars - 1 - head), chars = 0;
    escape_n(f, s, head);
    /* escape_n ended with an ellipsis; the tail starts at code point `skip` */
    const char *p = s;
    for (; *p; p++)
        if ((*(const unsigned char *)p & 0xC0) != 0x80 && chars++ == skip)
            break;
    escape_n(f, p, -1);
}

int cc_html_chars(const char *s)
{
    int n = 0;
    for (const unsigned char *p = (const unsigned char *)s; p && *p; p++)
        n += (*p & 0xC0) != 0x80;
    return n;
}
