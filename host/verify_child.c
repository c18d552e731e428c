/* verify_child: fork, run, report through a pipe, and tell a crash from a failure. */
#include "verify_child.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

int check_set(check_result *r, int status, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    r->status = status;
    vsnprintf(r->detail, sizeof r->detail, fmt, ap);
    va_end(ap);
    return status == CHECK_FAIL ? -1 : 0;
}

static void silence(int fd)
{
    int null = open("/dev/null", O_WRONLY);
    if (null >= 0) {
        dup2(null, fd);
        close(null);
    }
}

static void run_child(check_fn fn, void *ctx, unsigned timeout_s, int keep_stderr, int out)
{
    silence(STDOUT_FILENO);
    if (!keep_stderr)
        silence(STDERR_FILENO);
    signal(SIGALRM, SIG_DFL);
    alarm(timeout_s);
    check_result r = { .status = CHECK_FAIL, .detail = "the check reported nothing" };
    fn(ctx, &r);
    ssize_t n = write(out, &r, sizeof r);
    /* _exit: no atexit handlers, no stdio flush of the parent's buffers, no leak report of
     * the whole child -- the destroy check asks for that itself. */
    _exit(n == (ssize_t)sizeof r ? 0 : 3);
}

static void describe_death(int wstatus, unsigned timeout_s, check_result *r)
{
    if (WIFSIGNALED(wstatus) && WTERMSIG(wstatus) == SIGALRM)
        check_set(r, CHECK_FAIL, "did not finish within %u s", timeout_s);
    else if (WIFSIGNALED(wstatus))
        check_set(r, CHECK_FAIL, "crashed: %s (signal %d)", strsignal(WTERMSIG(wstatus)),
                  WTERMSIG(wstatus));
    else if (WIFEXITED(wstatus))
        check_set(r, CHECK_FAIL, "the stage ended the process with exit status %d (a "
                  "sanitizer report, or exit() called by the stage)", WEXITSTATUS(wstatus));
    else
        check_set(r, CHECK_FAIL, "the check's process ended abnormally");
}

void verify_in_child(check_fn fn, void *ctx, unsigned timeout_s, int keep_stderr,
                     check_result *r)
{
    int fds[2];
    if (pipe(fds)) {
        check_set(r, CHECK_FAIL, "cannot create a pipe: %s", strerror(errno));
        return;
    }
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0) {
        check_set(r, CHECK_FAIL, "cannot fork: %s", strerror(errno));
        close(fds[0]);
        close(fds[1]);
        return;
    }
    if (pid == 0) {
        close(fds[0]);
        run_child(fn, ctx, timeout_s, keep_stderr, fds[1]);
    }
    close(fds[1]);
    check_result got;
    size_t have = 0;
    while (have < sizeof got) {
        ssize_t n = read(fds[0], (char *)&got + have, sizeof got - have);
        if (n < 0 && errno == EINTR)
            continue;
        if (n <= 0)
            break;
        have += (size_t)n;
    }
    close(fds[0]);
    int wstatus = 0;
    while (waitpid(pid, &wstatus, 0) < 0 && errno == EINTR)
        ;
    if (have == sizeof got && WIFEXITED(wstatus) && WEXITSTATUS(wstatus) == 0) {
        *r = got;
        r->detail[sizeof r->detail - 1] = 0;
        return;
    }
    describe_death(wstatus, timeout_s, r);
}
