/* fuzz_rules.c — libFuzzer entry for the rules-file parser: any text is
 * either refused with a message or gives rules whose names, metrics and
 * receivers can be read back. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "rule.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > 1 << 16)
        return 0;
    char *text = malloc(size + 1);
    if (!text)
        abort();
    memcpy(text, data, size);
    text[size] = '\0';
    cc_ruleset *rs = NULL;
    cc_error err = CC_ERROR_INIT;
    if (cc_rules_parse(&rs, text, "fuzz.json", &err) == 0) {
        for (int i = 0; i < cc_rules_count(rs); i++) {
            const cc_rule *r = cc_rules_get(rs, i);
            if (!r->name || !r->metric || strlen(r->name) == 0)
                abort();
        }
        for (int i = 0; i < cc_rules_receiver_count(rs); i++)
            if (!cc_rules_receiver(rs, i)->url)
                abort();
        cc_rules_free(rs);
    } else if (err.msg[0] == '\0') {
        abort(); /* a refusal always says why */
    }
    free(text);
    return 0;
}
