/* json_print.h — prints a cJSON tree in cJSON_Print's layout (tabs, ":\t",
 * ", " between array elements), but writes every number so that reading it
 * back gives the same double bit for bit, and without cJSON's print-then-
 * sscanf round trip per number. */
#ifndef CC_JSON_PRINT_H
#define CC_JSON_PRINT_H

#include <stddef.h>

struct cJSON;

/* Writes x into buf (at least CC_JSON_NUMBER_MAX bytes) as a JSON number and
 * returns its length: "null" when x is not finite; an integer in decimal
 * when x is integral and |x| < 2^63 ("0" for -0, as cJSON does); otherwise
 * the shortest of %.15g, %.16g, %.17g that strtod reads back as x. */
#define CC_JSON_NUMBER_MAX 32
size_t cc_json_number(char *buf, double x);

/* The text of item as cJSON_Print lays it out when item sits at nesting
 * depth `depth` (0 for a document's root; each object or array level adds
 * one tab of indentation). Returns a malloc'd string the caller frees, or
 * NULL when memory runs out or the tree holds an item type cJSON_Print
 * would not print. */
char *cc_json_print(const struct cJSON *item, int depth);

#endif
