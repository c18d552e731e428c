/* Control socket misuse: clients that connect and never send must not lock the others out. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/un.h>
#include <unistd.h>

#include "control.h"

static int answer_ok(void *ctx, const char *line, char *reply, size_t reply_size)
{
    (void)ctx;
    snprintf(reply, reply_size, "{\"ok\":true,\"echo\":\"%s\"}", line);
    return 0;
}

static int connect_to(const char *path)
{
    struct sockaddr_un a = { .sun_family = AF_UNIX };
    strncpy(a.sun_path, path, sizeof a.sun_path - 1);
    int fd = socket(AF_UNIX, SOCK_STREAM, 0);
    cr_assert(fd >= 0);
    cr_assert_eq(connect(fd, (struct sockaddr *)&a, sizeof a), 0);
    return fd;
}

Test(qa_control, silent_clients_give_their_place_to_a_newcomer)
{
    char path[64];
    snprintf(path, sizeof path, "/tmp/weft-qa-control-%d.sock", (int)getpid());
    diag d = { 0 };
    control *c = control_open(path, &d);
    cr_assert_not_null(c, "%s", d.msg);
    int silent[32];
    for (int i = 0; i < 32; i++) {
        silent[i] = connect_to(path);
        control_serve(c, answer_ok, NULL);
    }
    sleep(2); /* longer than the idle limit: the silent clients are now evictable */
    int fd = connect_to(path);
    cr_assert_eq(write(fd, "status\n", 7), 7);
    control_serve(c, answer_ok, NULL);
    control_serve(c, answer_ok, NULL);
    char reply[256] = { 0 };
    ssize_t k = read(fd, reply, sizeof reply - 1);
    cr_assert_gt(k, 0);
    cr_assert(strstr(reply, "\"echo\":\"status\"") != NULL, "reply: %s", reply);
    close(fd);
    for (int i = 0; i < 32; i++)
        close(silent[i]);
    control_close(c);
}

Test(qa_control, an_active_client_keeps_its_place_against_newcomers)
{
    char path[64];
    snprintf(path, sizeof path, "/tmp/weft-qa-control-b-%d.sock", (int)getpid());
    diag d = { 0 };
    control *c = control_open(path, &d);
    cr_assert_not_null(c, "%s", d.msg);
    int fds[8];
    for (int i = 0; i < 8; i++) {
        fds[i] = connect_to(path);
        control_serve(c, answer_ok, NULL);
    }
    int late = connect_to(path);
    control_serve(c, answer_ok, NULL);
    char reply[256] = { 0 };
    cr_assert_gt(read(late, reply, sizeof reply - 1), 0);
    cr_assert(strstr(reply, "too many control clients") != NULL, "reply: %s", reply);
    cr_assert_eq(write(fds[0], "status\n", 7), 7);
    control_serve(c, answer_ok, NULL);
    memset(reply, 0, sizeof reply);
    cr_assert_gt(read(fds[0], reply, sizeof reply - 1), 0, "the first client was dropped");
    cr_assert(strstr(reply, "\"echo\":\"status\"") != NULL, "reply: %s", reply);
    close(late);
    for (int i = 0; i < 8; i++)
        close(fds[i]);
    control_close(c);
}
