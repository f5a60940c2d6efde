/* io_outfile.c — the safe output file: a temporary name in the target's directory, renamed
 * over the target only when every byte was written, flushed and synced.
 * Owns: output file descriptors, the temporary name, the output buffer. Must not: format
 * records (io_write.c does) or print anything. */
#ifndef _XOPEN_SOURCE
#define _XOPEN_SOURCE 700 /* realpath */
#endif
#include "addsite/io.h"
#include "io_int.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#define OUT_FLUSH_AT 65536

enum { OUT_TEMP, OUT_DIRECT, OUT_MEMORY };

struct as_outfile {
    int kind;
    int fd;            /* -1 for memory */
    int own_fd;        /* 0 for standard output */
    char *path;        /* the target (OUT_TEMP) or what was opened, for messages */
    char *tmp;         /* temporary name (OUT_TEMP) */
    as_io_buf buf;     /* bytes not yet written (files) or everything (memory) */
    int failed;        /* a write failed: every later call fails and close cleans up */
    char why[200];
};

static as_status out_fail(as_outfile *f, as_error *err, const char *what, int e)
{
    if (!f->failed) {
        f->failed = 1;
        snprintf(f->why, sizeof f->why, "%s %.120s: %s", what, f->path, strerror(e));
    }
    return as_error_set(err, AS_ERR_IO, -1, -1, "%s", f->why);
}

static as_status out_flush(as_outfile *f, as_error *err)
{
    size_t done = 0;
    while (done < f->buf.len) {
        ssize_t w = write(f->fd, f->buf.p + done, f->buf.len - done);
        if (w < 0) {
            if (errno == EINTR)
                continue;
            int e = errno;
            f->buf.len = 0;
            return out_fail(f, err, "cannot write", e);
        }
        if (w == 0) {
            f->buf.len = 0;
            return out_fail(f, err, "cannot write", EIO);
        }
        done += (size_t)w;
    }
    f->buf.len = 0;
    return AS_OK;
}

/* A name for the temporary file: ".<base>.<6 letters>.tmp" in the target's directory. */
static char *temp_name(const char *path, unsigned long salt)
{
    const char *slash = strrchr(path, '/');
    size_t dirlen = slash ? (size_t)(slash - path) + 1 : 0;
    const char *base = slash ? slash + 1 : path;
    size_t n = dirlen + 1 + strlen(base) + 1 + 6 + 4 + 1;
    char *t = malloc(n);
    if (!t)
        return NULL;
    static const char letters[] = "abcdefghijklmnopqrstuvwxyz0123456789";
    char tag[7];
    for (int i = 0; i < 6; i++) {
        tag[i] = letters[salt % 36];
        salt /= 36;
    }
    tag[6] = '\0';
    snprintf(t, n, "%.*s.%s.%s.tmp", (int)dirlen, path, base, tag);
    return t;
}

static unsigned long mix(unsigned long h, unsigned long v)
{
    h ^= v + 0x9e3779b9UL + (h << 6) + (h >> 2);
    return h;
}

as_status as_outfile_open(const char *path, as_outfile **out, as_error *err)
{
    if (!path || !out || !path[0])
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no output path or no place for the file");
    *out = NULL;
    as_outfile *f = calloc(1, sizeof *f);
    if (!f)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening the output");
    f->fd = -1;
    if (strcmp(path, "-") == 0) {
        f->kind = OUT_DIRECT;
        f->fd = STDOUT_FILENO;
        f->path = strdup("standard output");
        if (!f->path) {
            free(f);
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening the output");
        }
        *out = f;
        return AS_OK;
    }
    struct stat sb;
    int exists = stat(path, &sb) == 0;
    if (exists && S_ISDIR(sb.st_mode)) {
        free(f);
        return as_error_set(err, AS_ERR_IO, -1, -1, "cannot write %.160s: it is a directory",
                            path);
    }
    if (exists && !S_ISREG(sb.st_mode)) {
        /* A device, pipe or socket: there is nothing to rename, write it directly. */
        f->kind = OUT_DIRECT;
        f->path = strdup(path);
        f->fd = f->path ? open(path, O_WRONLY | O_CLOEXEC) : -1;
        if (!f->path || f->fd < 0) {
            int e = errno;
            free(f->path);
            free(f);
            return as_error_set(err, AS_ERR_IO, -1, -1, "cannot open %.160s: %s", path,
                                strerror(e));
        }
        f->own_fd = 1;
        *out = f;
        return AS_OK;
    }
    f->kind = OUT_TEMP;
    /* Replace the file a symbolic link points to, not the link. */
    char *real = NULL;
    if (exists) {
        struct stat lb;
        if (lstat(path, &lb) == 0 && S_ISLNK(lb.st_mode))
            real = realpath(path, NULL);
    }
    f->path = real ? real : strdup(path);
    if (!f->path) {
        free(f);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening the output");
    }
    unsigned long salt = mix((unsigned long)time(NULL), (unsigned long)getpid());
    salt = mix(salt, (unsigned long)(uintptr_t)f);
    salt = mix(salt, (unsigned long)clock());
    for (int attempt = 0; attempt < 64 && f->fd < 0; attempt++) {
        free(f->tmp);
        f->tmp = temp_name(f->path, mix(salt, (unsigned long)attempt * 7919UL));
        if (!f->tmp)
            break;
        f->fd = open(f->tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (f->fd < 0 && errno != EEXIST)
            break;
    }
    if (f->fd < 0) {
        int e = f->tmp ? errno : ENOMEM;
        as_status st = as_error_set(err, e == ENOMEM ? AS_ERR_NOMEM : AS_ERR_IO, -1, -1,
                                    "cannot create a file next to %.160s: %s", f->path,
                                    strerror(e));
        free(f->tmp);
        free(f->path);
        free(f);
        return st;
    }
    f->own_fd = 1;
    if (exists)
        (void)fchmod(f->fd, sb.st_mode & 07777);
    *out = f;
    return AS_OK;
}

as_status as_outfile_open_memory(as_outfile **out, as_error *err)
{
    if (!out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no place for the output file");
    as_outfile *f = calloc(1, sizeof *f);
    if (!f || !(f->path = strdup("memory"))) {
        free(f);
        *out = NULL;
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening the output");
    }
    f->kind = OUT_MEMORY;
    f->fd = -1;
    *out = f;
    return AS_OK;
}

as_status as_outfile_write(as_outfile *f, const void *data, size_t n, as_error *err)
{
    if (!f || (!data && n))
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no output file or no data");
    if (f->failed)
        return as_error_set(err, AS_ERR_IO, -1, -1, "%s", f->why);
    if (f->kind != OUT_MEMORY && f->buf.len + n > OUT_FLUSH_AT) {
        as_status st = out_flush(f, err);
        if (st != AS_OK)
            return st;
        if (n > OUT_FLUSH_AT) {
            /* Large pieces go straight out. */
            const char *p = data;
            size_t done = 0;
            while (done < n) {
                ssize_t w = write(f->fd, p + done, n - done);
                if (w < 0 && errno == EINTR)
                    continue;
                if (w <= 0)
                    return out_fail(f, err, "cannot write", w < 0 ? errno : EIO);
                done += (size_t)w;
            }
            return AS_OK;
        }
    }
    if (as_io_buf_put(&f->buf, data, n) != 0)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing %.160s", f->path);
    return AS_OK;
}

const char *as_outfile_memory(const as_outfile *f, size_t *len)
{
    if (!f || f->kind != OUT_MEMORY) {
        if (len)
            *len = 0;
        return NULL;
    }
    if (len)
        *len = f->buf.len;
    return f->buf.p ? f->buf.p : "";
}

static void out_free(as_outfile *f)
{
    as_io_buf_free(&f->buf);
    free(f->tmp);
    free(f->path);
    free(f);
}

as_status as_outfile_close(as_outfile *f, as_error *err)
{
    if (!f)
        return AS_OK;
    if (f->kind == OUT_MEMORY) {
        out_free(f);
        return AS_OK;
    }
    as_status st = AS_OK;
    as_error local;
    as_error *e = err ? err : &local;
    if (f->failed)
        st = as_error_set(e, AS_ERR_IO, -1, -1, "%s", f->why);
    if (st == AS_OK)
        st = out_flush(f, e);
    if (st == AS_OK && f->kind == OUT_TEMP && fsync(f->fd) != 0)
        st = out_fail(f, e, "cannot sync", errno);
    if (f->own_fd) {
        if (close(f->fd) != 0 && st == AS_OK)
            st = out_fail(f, e, "cannot close", errno);
        f->fd = -1;
    }
    if (f->kind == OUT_TEMP) {
        if (st == AS_OK && rename(f->tmp, f->path) != 0)
            st = out_fail(f, e, "cannot rename the finished file to", errno);
        if (st != AS_OK)
            (void)unlink(f->tmp);
    }
    out_free(f);
    return st;
}

void as_outfile_abort(as_outfile *f)
{
    if (!f)
        return;
    if (f->own_fd && f->fd >= 0)
        (void)close(f->fd);
    if (f->kind == OUT_TEMP && f->tmp)
        (void)unlink(f->tmp);
    out_free(f);
}
