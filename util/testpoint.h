/* testpoint.h — named points where a crash test may stop the process.
 *
 * Crash tests must kill at a point they choose, not after a sleep. When the
 * environment variable CONCORD_TESTPOINT is "NAME:N", the N-th time the code
 * passes cc_testpoint("NAME") the process writes
 *     concord: testpoint NAME N reached
 * on standard error and then waits (pause) until a signal ends it; the test
 * reads that line and sends SIGKILL. Without the variable a call costs one
 * cached comparison. Names in use are listed in util/README.md. */
#ifndef CC_UTIL_TESTPOINT_H
#define CC_UTIL_TESTPOINT_H

void cc_testpoint(const char *name);

#endif
