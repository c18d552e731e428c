/* edf_header: the header of an EDF, EDF+, BDF or BDF+ file -- parsed from bytes with errors
 * that name the field and its byte offset, and formatted for writing. Layout from the EDF
 * specification (Kemp et al. 1992) and its EDF+ extension (Kemp and Olivan 2003); BDF is the
 * 24-bit variant (its version field is byte 255 and seven fixed letters, EDF_BDF_VERSION),
 * BDF+ its EDF+-style extension. */
#ifndef WEFT_EDF_HEADER_H
#define WEFT_EDF_HEADER_H

#include <stddef.h>
#include <stdint.h>

/* The 8-byte version field the BDF format prescribes: 0xFF and seven ASCII letters. */
extern const uint8_t EDF_BDF_VERSION[8];

#define EDF_FIXED_BYTES 256         /* the part before the signal headers */
#define EDF_SIGNAL_BYTES 256        /* per signal */
#define EDF_MAX_SIGNALS 9999u       /* the signal count is a 4-character field */
#define EDF_LABEL_CHARS 16
#define EDF_ERROR_MAX 256

/* Byte offsets of the fixed fields (Kemp et al. 1992, table 1). */
enum {
    EDF_AT_VERSION = 0,             /* 8 */
    EDF_AT_PATIENT = 8,             /* 80 */
    EDF_AT_RECORDING = 88,          /* 80 */
    EDF_AT_START_DATE = 168,        /* 8, dd.mm.yy */
    EDF_AT_START_TIME = 176,        /* 8, hh.mm.ss */
    EDF_AT_HEADER_BYTES = 184,      /* 8 */
    EDF_AT_RESERVED = 192,          /* 44; "EDF+C" / "EDF+D" in EDF+ (Kemp and Olivan 2003) */
    EDF_AT_N_RECORDS = 236,         /* 8; -1 while being recorded */
    EDF_AT_RECORD_SECONDS = 244,    /* 8 */
    EDF_AT_N_SIGNALS = 252          /* 4 */
};

typedef struct edf_signal {
    char label[EDF_LABEL_CHARS + 1];    /* trailing spaces removed */
    char transducer[81];
    char unit[9];
    char prefilter[81];
    double phys_min, phys_max;
    int32_t dig_min, dig_max;
    uint32_t samples_per_record;
    int annotations;                /* an "EDF Annotations" / "BDF Annotations" signal */
    double gain, offset;            /* physical = gain * digital + offset */
    uint64_t record_offset;         /* byte offset of this signal inside a data record */
} edf_signal;

typedef struct edf_header {
    int bdf;                        /* 24-bit samples (BDF, BDF+) rather than 16-bit */
    int plus;                       /* EDF+ or BDF+: annotations, "+C" / "+D" */
    int discontinuous;              /* "+D": records may have gaps between them */
    char patient[81], recording[81];
    char start_date[9], start_time[9];
    uint32_t header_bytes;
    int64_t n_records;              /* as written; -1 means unknown (still being recorded) */
    double record_seconds;
    uint32_t n_signals;
    edf_signal *signals;            /* n_signals, owned */
    uint32_t sample_bytes;          /* 2 (EDF) or 3 (BDF) */
    uint64_t record_bytes;          /* one data record, all signals */
} edf_header;

/* Parse the fixed 256-byte part. On success h->header_bytes and h->n_signals are known and the
 * caller can read the rest. Returns 0, or -1 with "header byte N (FIELD): what is wrong" in
 * err. */
int edf_header_parse_fixed(const uint8_t *buf, size_t len, edf_header *h, char *err,
                           size_t err_size);

/* Parse a whole header (len >= the header bytes it announces). Allocates h->signals; call
 * edf_header_free afterwards, also after a failure. */
int edf_header_parse(const uint8_t *buf, size_t len, edf_header *h, char *err, size_t err_size);
void edf_header_free(edf_header *h);

/* Complete data records in a file of `file_size` bytes (whatever the header says). */
uint64_t edf_header_records_in(const edf_header *h, uint64_t file_size);

/* Sample rate of signal i in Hz (samples per record / record duration); 0 if the records
 * have no duration (an annotations-only file). */
double edf_signal_rate(const edf_header *h, uint32_t i);

/* Write the header for h into buf (room for 256 * (n_signals + 1) bytes). Every text field is
 * padded with spaces; numbers must already be representable in their field (use
 * edf_format_number). Fields that do not fit return -1 with the reason. */
int edf_header_format(const edf_header *h, uint8_t *buf, size_t len, char *err,
                      size_t err_size);

/* The 8-character "number of data records" field for n. */
void edf_format_records(int64_t n, char field[8]);

/* The most precise text of at most 8 characters for v (e.g. "-3276.8", "262143"), and the
 * value that text reads back as, which is the one a reader will use. Returns -1 if v cannot
 * be written in 8 characters. */
int edf_format_number(double v, char text[9], double *as_read);

/* Physical-to-digital gain and offset from the four range fields (Kemp et al. 1992). */
void edf_signal_scaling(edf_signal *s);

#endif
