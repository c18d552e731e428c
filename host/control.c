/* control: non-blocking Unix domain socket server and its one-shot client. */
#include "control.h"

#include <errno.h>
#include <fcntl.h>
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <time.h>
#include <unistd.h>

#define MAX_CLIENTS 8
#define LINE_MAX_BYTES 65536
#define REPLY_MAX_BYTES 65536
/* A client silent this long gives its place to a newcomer when all places are taken, so
 * connections left open by a stuck program cannot lock `weft stop` out of a run. */
#define IDLE_EVICT_SECONDS 1.0

typedef struct client {
    int fd;
    size_t len;
    char *line;
    double last_active;     /* monotonic seconds of the last connect or read */
} client;

struct control {
    int fd;
    char *path;
    client clients[MAX_CLIENTS];
    char *reply;
};

static int set_nonblocking(int fd)
{
    int flags = fcntl(fd, F_GETFL);
    return flags < 0 ? -1 : fcntl(fd, F_SETFL, flags | O_NONBLOCK);
}

static int fill_address(struct sockaddr_un *a, const char *path)
{
    memset(a, 0, sizeof *a);
    a->sun_family = AF_UNIX;
    if (strlen(path) >= sizeof a->sun_path)
        return -1;
    memcpy(a->sun_path, path, strlen(path) + 1);
    return 0;
}

/* A socket file nobody answers on is what a killed run leaves behind. */
static int is_stale_socket(const char *path)
{
    struct stat st;
    if (lstat(path, &st) || !S_ISSOCK(st.st_mode))
        return 0;
    struct sockaddr_un a;
    int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
    if (fd < 0 || fill_address(&a, path)) {
        if (fd >= 0)
            close(fd);
        return 0;
    }
    int alive = connect(fd, (struct sockaddr *)&a, sizeof a) == 0;
    close(fd);
    return !alive;
}

control *control_open(const char *path, diag *d)
{
    struct sockaddr_un a;
    if (fill_address(&a, path)) {
        diag_set(d, "control socket path '%s' is longer than %zu bytes", path,
                 sizeof a.sun_path - 1);
        return NULL;
    }
    if (access(path, F_OK) == 0) {
        if (!is_stale_socket(path)) {
            diag_set(d, "control socket '%s' exists and is in use or not a socket; remove it "
                        "or choose another path", path);
            return NULL;
        }
        unlink(path);
    }
    control *c = calloc(1, sizeof *c);
    if (c)
        c->fd = -1;
    if (!c || !(c->path = strdup(path)) || !(c->reply = malloc(REPLY_MAX_BYTES))) {
        diag_set(d, "out of memory");
        goto fail;
    }
    for (int i = 0; i < MAX_CLIENTS; i++) {
        c->clients[i].fd = -1;
        if (!(c->clients[i].line = malloc(LINE_MAX_BYTES))) {
            diag_set(d, "out of memory");
            goto fail;
        }
    }
    c->fd = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
    /* Owner-only from the first moment: the umask applies to bind's socket file. */
    mode_t old_mask = umask(0077);
    int bound = c->fd >= 0 && bind(c->fd, (struct sockaddr *)&a, sizeof a) == 0;
    umask(old_mask);
    if (!bound || chmod(path, 0600) || listen(c->fd, MAX_CLIENTS) || set_nonblocking(c->fd)) {
        diag_set(d, "cannot listen on control socket '%s': %s", path, strerror(errno));
        goto fail;
    }
    return c;
fail:
    if (c && c->fd >= 0 && c->path)
        unlink(c->path);
    control_close(c);
    return NULL;
}

static void drop(client *cl)
{
    if (cl->fd >= 0)
        close(cl->fd);
    cl->fd = -1;
    cl->len = 0;
}

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* A free place, else the place of the client silent longest if it has been idle long enough. */
static client *free_place(control *c, double now)
{
    client *idlest = NULL;
    for (int i = 0; i < MAX_CLIENTS; i++) {
        client *cl = &c->clients[i];
        if (cl->fd < 0)
            return cl;
        if (!idlest || cl->last_active < idlest->last_active)
            idlest = cl;
    }
    if (now - idlest->last_active < IDLE_EVICT_SECONDS)
        return NULL;
    drop(idlest);
    return idlest;
}

static void accept_new(control *c)
{
    for (;;) {
        int fd = accept(c->fd, NULL, NULL);
        if (fd < 0)
            return;
        set_nonblocking(fd);
        double now = now_seconds();
        client *place = free_place(c, now);
        if (place) {
            place->fd = fd;
            place->len = 0;
            place->last_active = now;
        } else {
            static const char busy[] = "{\"ok\":false,\"error\":\"too many control clients\"}\n";
            if (write(fd, busy, sizeof busy - 1) < 0) { /* nothing more to do */ }
            close(fd);
        }
    }
}

/* One write of the whole line: a client either gets it whole or, if it has not read its
 * earlier replies and the socket buffer is full, is dropped -- never half a line. */
static void reply_line(client *cl, char *text, size_t room)
{
    size_t n = strlen(text);
    if (n + 1 >= room)
        n = room - 2;
    text[n] = '\n';
    if (write(cl->fd, text, n + 1) != (ssize_t)(n + 1))
        drop(cl);
}

/* Commands one client may have run per round: a client pouring commands in cannot hold the
 * run loop; what it sent waits for the next round. */
#define COMMANDS_PER_ROUND 16

/* Returns 1 if a command asked to stop. */
static int serve_client(control *c, client *cl, control_handler handle, void *ctx)
{
    int stop = 0;
    unsigned served = 0;
    for (;;) {
        char *nl;
        while (cl->fd >= 0 && served < COMMANDS_PER_ROUND &&
               (nl = memchr(cl->line, '\n', cl->len))) {
            *nl = 0;
            if (nl > cl->line && nl[-1] == '\r')
                nl[-1] = 0;
            c->reply[0] = 0;
            stop |= handle(ctx, cl->line, c->reply, REPLY_MAX_BYTES - 1) == 1;
            served++;
            size_t used = (size_t)(nl + 1 - cl->line);
            memmove(cl->line, nl + 1, cl->len - used);
            cl->len -= used;
            reply_line(cl, c->reply, REPLY_MAX_BYTES);
        }
        if (cl->fd < 0 || served == COMMANDS_PER_ROUND)
            return stop;
        if (cl->len == LINE_MAX_BYTES - 1) {
            snprintf(c->reply, REPLY_MAX_BYTES, "%s",
                     "{\"ok\":false,\"error\":\"command line longer than 64 KiB\"}");
            reply_line(cl, c->reply, REPLY_MAX_BYTES);
            drop(cl);
            return stop;
        }
        ssize_t k = read(cl->fd, cl->line + cl->len, LINE_MAX_BYTES - 1 - cl->len);
        if (k == 0 || (k < 0 && errno != EAGAIN && errno != EINTR)) {
            drop(cl);
            return stop;
        }
        if (k < 0)
            return stop;
        cl->last_active = now_seconds();
        cl->len += (size_t)k;
    }
}

int control_serve(control *c, control_handler handle, void *ctx)
{
    if (!c)
        return 0;
    accept_new(c);
    int stop = 0;
    for (int i = 0; i < MAX_CLIENTS; i++)
        if (c->clients[i].fd >= 0)
            stop |= serve_client(c, &c->clients[i], handle, ctx);
    return stop;
}

void control_close(control *c)
{
    if (!c)
        return;
    for (int i = 0; i < MAX_CLIENTS; i++) {
        drop(&c->clients[i]);
        free(c->clients[i].line);
    }
    if (c->fd >= 0) {
        close(c->fd);
        if (c->path)
            unlink(c->path);
    }
    free(c->path);
    free(c->reply);
    free(c);
}

int control_request(const char *path, const char *line, char *reply, size_t reply_size,
                    double timeout_s)
{
    struct sockaddr_un a;
    if (fill_address(&a, path)) {
        snprintf(reply, reply_size, "socket path '%s' is too long", path);
        return -1;
    }
    int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
    if (fd < 0 || connect(fd, (struct sockaddr *)&a, sizeof a)) {
        snprintf(reply, reply_size, "cannot connect to %s: %s (is `weft run --control %s` "
                 "running?)", path, strerror(errno), path);
        if (fd >= 0)
            close(fd);
        return -1;
    }
    size_t n = strlen(line);
    if (write(fd, line, n) != (ssize_t)n || write(fd, "\n", 1) != 1) {
        snprintf(reply, reply_size, "cannot send to %s: %s", path, strerror(errno));
        close(fd);
        return -1;
    }
    size_t len = 0;
    int timeout_ms = (int)(timeout_s * 1000);
    while (len + 1 < reply_size) {
        struct pollfd p = { fd, POLLIN, 0 };
        if (poll(&p, 1, timeout_ms) <= 0) {
            snprintf(reply, reply_size, "no reply from %s within %g s", path, timeout_s);
            close(fd);
            return -1;
        }
        ssize_t k = read(fd, reply + len, reply_size - 1 - len);
        if (k <= 0)
            break;
        len += (size_t)k;
        if (memchr(reply, '\n', len))
            break;
    }
    close(fd);
    reply[len] = 0;
    char *nl = strchr(reply, '\n');
    if (nl)
        *nl = 0;
    if (len == 0) {
        snprintf(reply, reply_size, "the run closed the connection without replying");
        return -1;
    }
    return 0;
}
