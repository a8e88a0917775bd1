/* evidence.h — the top evidence behind an alert, chosen by the metric's
 * family: contested class pairs and the member that moved (diversity and
 * uncertainty), the most drifted classes and members (drift, label shift),
 * members' accuracy against the baseline (accuracy, calibration), label
 * counts (labels). Each item has a "kind", its numbers and a short "text". */
#ifndef CC_ALERTS_EVIDENCE_H
#define CC_ALERTS_EVIDENCE_H

#include <cjson/cJSON.h>

#include "report.h"
#include "rule.h"

/* A JSON array (caller deletes); r may be NULL (no events that day).
 * NULL only on out of memory. */
cJSON *cc_evidence_build(const cc_report *r, const cc_rule *rule);

#endif
