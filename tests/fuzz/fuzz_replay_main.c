/* fuzz_replay_main: runs a libFuzzer target without libFuzzer, so every build exercises it:
 * a valid EDF+ header and TALs, every truncation of them, and a fixed-seed series of random
 * byte mutations. With arguments, runs each named file instead (a crash found by the fuzzer).
 * Prints "N passed, 0 failed" (a crash fails the test by itself). */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "edf_header.h"
#include "edf_tal.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

#define MUTATIONS 20000

static size_t seed_file(uint8_t *buf, size_t cap)
{
    edf_signal sig[2] = { { .label = "eeg.C3", .unit = "uV", .phys_min = -100, .phys_max = 100,
                            .dig_min = -32768, .dig_max = 32767, .samples_per_record = 10 },
                          { .label = "EDF Annotations", .phys_min = -1, .phys_max = 1,
                            .dig_min = -32768, .dig_max = 32767, .samples_per_record = 20 } };
    edf_header h = { .plus = 1, .patient = "X X X X", .recording = "Startdate X X X X",
                     .start_date = "01.01.24", .start_time = "00.00.00", .n_records = 1,
                     .record_seconds = 1, .n_signals = 2, .signals = sig };
    char err[EDF_ERROR_MAX];
    if (edf_header_format(&h, buf, cap, err, sizeof err))
        return 0;
    size_t n = 768;
    memset(buf + n, 0, 60);
    size_t t = edf_tal_format(buf + n + 20, 40, 0, 0, "");
    edf_tal_format(buf + n + 20 + t, 40 - t, 0.5, 2, "grip");
    return n + 60;
}

static uint64_t next(uint64_t *s) /* xorshift64 */
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return *s;
}

int main(int argc, char **argv)
{
    unsigned long runs = 0;
    if (argc > 1) {
        for (int i = 1; i < argc; i++) {
            FILE *f = fopen(argv[i], "rb");
            if (!f)
                continue;
            static uint8_t data[1 << 20];
            size_t n = fread(data, 1, sizeof data, f);
            fclose(f);
            LLVMFuzzerTestOneInput(data, n);
            runs++;
        }
        printf("%lu passed, 0 failed\n", runs);
        return 0;
    }
    static uint8_t seed[1024], work[1024];
    size_t n = seed_file(seed, sizeof seed);
    if (!n)
        return 1;
    for (size_t len = 0; len <= n; len++, runs++) {
        uint8_t *exact = malloc(len ? len : 1); /* exact size, so ASan sees any overread */
        memcpy(exact, seed, len);
        LLVMFuzzerTestOneInput(exact, len);
        free(exact);
    }
    uint64_t s = 88172645463325252ull;
    for (unsigned m = 0; m < MUTATIONS; m++, runs++) {
        memcpy(work, seed, n);
        unsigned flips = 1 + (unsigned)(next(&s) % 8);
        for (unsigned k = 0; k < flips; k++) {
            size_t at = (size_t)(next(&s) % n);
            static const uint8_t interesting[] = { '0', '9', '-', ' ', '.', 0, 0x14, 0x15, 0xFF,
                                                   'e', '+' };
            work[at] = next(&s) % 2 ? (uint8_t)next(&s)
                                    : interesting[next(&s) % sizeof interesting];
        }
        size_t len = (size_t)(next(&s) % (n + 1));
        uint8_t *exact = malloc(len ? len : 1);
        memcpy(exact, work, len);
        LLVMFuzzerTestOneInput(exact, len);
        free(exact);
    }
    printf("%lu passed, 0 failed\n", runs);
    return 0;
}
