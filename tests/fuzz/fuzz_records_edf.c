/* fuzz_records_edf: libFuzzer target for the EDF/BDF header parser and the TAL parser, the
 * code that reads untrusted recording files. Any input must give 0 or a message, never a read
 * outside the buffer (AddressSanitizer watches) or a crash. */
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "edf_header.h"
#include "edf_tal.h"

static int count(void *ctx, const edf_annotation *a)
{
    size_t *n = ctx;
    *n += a->text_len;
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    edf_header h;
    char err[EDF_ERROR_MAX];
    if (edf_header_parse(data, size, &h, err, sizeof err) == 0) {
        /* A valid header: the bytes after it as one record's annotations. */
        for (uint32_t i = 0; i < h.n_signals; i++)
            (void)edf_signal_rate(&h, i);
        (void)edf_header_records_in(&h, size);
    } else if (!memchr(err, 0, sizeof err)) {
        __builtin_trap(); /* the message must be a terminated string */
    }
    edf_header_free(&h);
    double start;
    size_t n = 0, bad_at = 0;
    edf_tal_parse(data, size, &start, count, &n, &bad_at, err, sizeof err);
    if (bad_at > size)
        __builtin_trap();
    return 0;
}
