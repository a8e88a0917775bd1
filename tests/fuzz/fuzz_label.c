/* fuzz_label.c — libFuzzer entry for the delayed-label line parser: what is
 * accepted has an id of 1..128 bytes and either a class index or a UTF-8
 * class name without NUL characters. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "event_parse.h"
#include "utf8.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static cc_parser *p;
    char why[256];
    if (!p && !(p = cc_parser_create()))
        abort();
    cc_label_line lab;
    if (cc_parse_label(p, (const char *)data, size, &lab, why, sizeof why) != 0)
        return 0;
    if (lab.id_len < 1 || lab.id_len > CC_ID_MAX || !cc_utf8_valid(lab.id, (size_t)lab.id_len, NULL))
        abort();
    if ((lab.label < 0) == (lab.label_name == NULL))
        abort(); /* exactly one of index and name */
    if (lab.label_name && (lab.label_name[0] == '\0' ||
                           !cc_utf8_valid(lab.label_name, strlen(lab.label_name), NULL)))
        abort();
    return 0;
}
