/* test_utf8.c — UTF-8 validation against RFC 3629 (section 4's table of
 * well-formed byte sequences and section 10's examples of ill-formed ones:
 * the overlong C0 80, surrogates ED A0 80, above U+10FFFF F4 90 80 80) and
 * the escaping of control characters for terminals. */
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "utf8.h"

static int valid(const char *s) { return cc_utf8_valid(s, strlen(s), NULL); }

static int escaped_is(const char *in, int multiline, const char *want)
{
    char *got = cc_text_escape(in, strlen(in), multiline);
    int ok = got && strcmp(got, want) == 0;
    if (!ok)
        fprintf(stderr, "escape(%s) = '%s', want '%s'\n", in, got ? got : "(null)", want);
    free(got);
    return ok;
}

int main(void)
{
    /* well-formed: ASCII, and the first and last code point of each length */
    CHECK(valid("plain ascii"));
    CHECK(valid("\xc2\x80\xdf\xbf"));                 /* U+0080, U+07FF */
    CHECK(valid("\xe0\xa0\x80\xef\xbf\xbf"));         /* U+0800, U+FFFF */
    CHECK(valid("\xed\x9f\xbf\xee\x80\x80"));         /* U+D7FF, U+E000 around surrogates */
    CHECK(valid("\xf0\x90\x80\x80\xf4\x8f\xbf\xbf")); /* U+10000, U+10FFFF */
    CHECK(valid("caf\xc3\xa9 \xe2\x82\xac \xf0\x9f\x8d\x8e"));
    /* ill-formed */
    size_t at = 99;
    CHECK(!cc_utf8_valid("ab\xc0\x80", 4, &at) && at == 2); /* overlong NUL */
    CHECK(!valid("\xc1\xbf"));                               /* overlong U+007F */
    CHECK(!valid("\xe0\x9f\xbf"));                           /* overlong U+07FF */
    CHECK(!valid("\xf0\x8f\xbf\xbf"));                       /* overlong U+FFFF */
    CHECK(!valid("\xed\xa0\x80"));                           /* U+D800 */
    CHECK(!valid("\xed\xbf\xbf"));                           /* U+DFFF */
    CHECK(!valid("\xf4\x90\x80\x80"));                       /* U+110000 */
    CHECK(!valid("\xf5\x80\x80\x80"));
    CHECK(!valid("\xff"));
    CHECK(!valid("\x80"));                                   /* lone continuation */
    CHECK(!cc_utf8_valid("x\xe2\x82", 3, &at) && at == 1);   /* truncated */
    CHECK(!valid("\xe2\x28\xa1"));                           /* bad continuation */
    CHECK(cc_utf8_valid("a\0b", 3, NULL));                   /* NUL is a code point */

    /* controls */
    CHECK(cc_utf8_control("a\x1b", 2, &at) && at == 1);
    CHECK(cc_utf8_control("\x7f", 1, NULL));
    CHECK(cc_utf8_control("x\xc2\x9b", 3, &at) && at == 1); /* C1 CSI */
    CHECK(!cc_utf8_control("\xc2\xa0\xc3\xa9", 4, NULL));   /* NBSP, e-acute */

    /* escaping: one field */
    CHECK(escaped_is("esc\x1b]0;t\x07", 0, "esc\\x1b]0;t\\x07"));
    CHECK(escaped_is("a\\b", 0, "a\\\\b"));
    CHECK(escaped_is("line\r\nnext\t", 0, "line\\x0d\\x0anext\\x09"));
    CHECK(escaped_is("csi\xc2\x9b" "2J", 0, "csi\\u009b2J"));
    CHECK(escaped_is("bad\xff\xc3", 0, "bad\\xff\\xc3"));
    CHECK(escaped_is("caf\xc3\xa9", 0, "caf\xc3\xa9"));
    CHECK(escaped_is("del\x7f", 0, "del\\x7f"));
    /* a whole document keeps its lines, tabs and backslashes */
    CHECK(escaped_is("a\tb\nc\\d\r\x1b[2J\n", 1, "a\tb\nc\\d\\x0d\\x1b[2J\n"));
    CHECK(cc_text_plain("caf\xc3\xa9 ok"));
    CHECK(!cc_text_plain("a\x1b"));
    CHECK(!cc_text_plain("a\\b"));
    return CHECK_DONE("utf8");
}
