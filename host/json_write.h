/* json_write: writing JSON strings (RFC 8259, section 7) to a stream, shared by the session
 * log and the replay report. */
#ifndef WEFT_JSON_WRITE_H
#define WEFT_JSON_WRITE_H

#include <stdio.h>

/* s in quotes with '"', '\\' and control characters escaped; NULL is written as "". */
void json_write_string(FILE *f, const char *s);

#endif
