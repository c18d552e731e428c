/* verify_child: runs one conformance check in a forked child, so a stage that crashes, hangs
 * or aborts fails that check instead of taking the checker down with it. */
#ifndef WEFT_VERIFY_CHILD_H
#define WEFT_VERIFY_CHILD_H

enum { CHECK_PASS = 0, CHECK_FAIL = 1, CHECK_SKIP = 2 };

#define CHECK_DETAIL_MAX 480

typedef struct check_result {
    int status;                 /* CHECK_* */
    char detail[CHECK_DETAIL_MAX];
} check_result;

typedef void (*check_fn)(void *ctx, check_result *r);

/* Run fn(ctx, r) in a child whose stdout goes to /dev/null (and stderr too unless
 * keep_stderr), killed after timeout_s seconds. A child that dies by a signal, exits without
 * reporting, or times out gives a FAIL that says which. */
void verify_in_child(check_fn fn, void *ctx, unsigned timeout_s, int keep_stderr,
                     check_result *r);

/* printf into r->detail with a status. Returns -1 for CHECK_FAIL, else 0, so a check can
 * `return check_set(r, CHECK_FAIL, ...)`. */
int check_set(check_result *r, int status, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

#endif
