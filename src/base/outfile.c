/* Atomic output files: temporary file in the target's directory, then rename(2). */
#define _DEFAULT_SOURCE /* mkstemps */
#include "outfile.h"

#include <errno.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <fcntl.h>
#include <stdlib.h>

/* Where an output really goes. A symbolic link is followed to its target (renaming onto the
 * link would replace the link by a file and leave its target stale); the result is `path`
 * itself otherwise, or when the link dangles. Returns 0, or -1 when the result does not fit. */
static int resolve_target(const char *path, char *out, size_t size)
{
    struct stat st;
    if (lstat(path, &st) == 0 && S_ISLNK(st.st_mode)) {
        char *real = realpath(path, NULL);
        if (real) {
            int fits = strlen(real) < size;
            if (fits)
                strcpy(out, real);
            free(real);
            return fits ? 0 : -1;
        }
    }
    if (strlen(path) >= size)
        return -1;
    strcpy(out, path);
    return 0;
}

/* Nonzero when `path` exists and is neither a regular file nor a directory: a terminal, a
 * pipe, a device such as /dev/stdout or /dev/null. Those are written in place: a temporary
 * file renamed onto them would replace the device node or FIFO by a plain file. */
static int is_special(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 && !S_ISREG(st.st_mode) && !S_ISDIR(st.st_mode);
}

/* mkstemps replaces the six characters before the suffix with a unique name. */
#define TP_TMP_UNIQUE "%.6s"
static const char tmp_unique[] = {'X', 'X', 'X', 'X', 'X', 'X', '\0'};

static int make_tmp_name(const char *path, const char *suffix, char *tmp, size_t size)
{
    const char *slash = strrchr(path, '/');
    const char *base = slash ? slash + 1 : path;
    int dirlen = slash ? (int)(slash - path + 1) : 0;
    int n = snprintf(tmp, size, "%.*s.%s." TP_TMP_UNIQUE "%s", dirlen, path, base, tmp_unique,
                     suffix);
    return n > 0 && (size_t)n < size;
}

/* The extension of `path` including the dot, or "" (kept so format-sniffing writers work). */
static const char *extension(const char *path)
{
    const char *dot = strrchr(path, '.');
    const char *slash = strrchr(path, '/');
    if (!dot || (slash && dot < slash) || dot == path)
        return "";
    return dot;
}

/* Create the empty temporary file for `path` (beside a symbolic link's target; in the working
 * directory when the target is a FIFO or device) with the permissions a plain fopen would give.
 * Returns 0, or an errno value (ENAMETOOLONG for a path that does not fit); *special tells
 * whether the target is a FIFO or device, *shown the directory named in a message. */
static int make_tmp(const char *path, char *tmp, size_t tmp_size, int *special,
                    const char **shown, char *target)
{
    const char *ext = extension(path);
    int fd, ok;
    *special = 0;
    *shown = path;
    tmp[0] = '\0';
    if (resolve_target(path, target, TP_PATH_MAX) != 0 || strlen(target) >= TP_PATH_MAX - 32)
        return ENAMETOOLONG;
    *shown = target;
    *special = is_special(target);
    if (*special) {
        /* A device or pipe takes no rename: the writer fills a temporary file in the working
         * directory and tp_outfile_place copies it in. */
        int n = snprintf(tmp, tmp_size, ".tepid-output." TP_TMP_UNIQUE "%s", tmp_unique, ext);
        ok = n > 0 && (size_t)n < tmp_size;
        *shown = ".";
    } else {
        ok = make_tmp_name(target, ext, tmp, tmp_size);
    }
    if (!ok) {
        tmp[0] = '\0';
        return ENAMETOOLONG;
    }
    fd = mkstemps(tmp, (int)strlen(ext));
    if (fd < 0) {
        int e = errno;
        tmp[0] = '\0';
        return e;
    }
    {
        /* mkstemps creates mode 0600; give the result the permissions a plain fopen would. */
        mode_t mask = umask(0);
        umask(mask);
        (void)fchmod(fd, 0666 & ~mask);
    }
    close(fd);
    return 0;
}

tp_status tp_outfile_reserve(const char *path, char *tmp, size_t tmp_size, tp_diag *d)
{
    char target[TP_PATH_MAX];
    const char *shown;
    int special;
    int e = make_tmp(path, tmp, tmp_size, &special, &shown, target);
    if (e == ENAMETOOLONG) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "output path too long: %s", path);
        return TP_ERR_IO;
    }
    if (e) {
        tp_diag_error(d, tp_diag_loc_none(), NULL,
                      special ? "run tepid in a writable directory"
                              : "check that the directory exists and is writable",
                      "cannot create an output file beside %s: %s", shown, strerror(e));
        return TP_ERR_IO;
    }
    return TP_OK;
}

int tp_outfile_check(const char *path, int by_name, char *why, size_t size)
{
    char target[TP_PATH_MAX], tmp[TP_PATH_MAX];
    const char *shown;
    struct stat st;
    int special, e;
    if (strcmp(path, "-") == 0)
        return 0;
    if (stat(path, &st) == 0 && S_ISDIR(st.st_mode)) {
        snprintf(why, size, "it is a directory");
        return -1;
    }
    if (!by_name && is_special(path)) {
        /* Written in place (tp_outfile_open): no temporary file, only the device itself. */
        if (access(path, W_OK) == 0)
            return 0;
        snprintf(why, size, "%s", strerror(errno));
        return -1;
    }
    e = make_tmp(path, tmp, sizeof tmp, &special, &shown, target);
    if (e == 0) {
        unlink(tmp);
        return 0;
    }
    if (e == ENAMETOOLONG)
        snprintf(why, size, "the path is longer than %d bytes", TP_PATH_MAX - 33);
    else if (special)
        snprintf(why, size, "no temporary file can be made in the working directory: %s",
                 strerror(e));
    else
        snprintf(why, size, "%s", strerror(e));
    return -1;
}

/* Copy the finished temporary file into a special file (a pipe, a terminal, /dev/stdout). */
static tp_status copy_into(const char *tmp, const char *path, tp_diag *d)
{
    FILE *in = fopen(tmp, "rb"), *out = in ? fopen(path, "wb") : NULL;
    char buf[8192];
    size_t n;
    int bad = !in || !out;
    while (!bad && (n = fread(buf, 1, sizeof buf, in)) > 0)
        bad = fwrite(buf, 1, n, out) != n;
    bad |= in && ferror(in);
    if (in)
        fclose(in);
    if (out)
        bad |= fclose(out) != 0;
    unlink(tmp);
    if (bad) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "cannot write %s: %s", path,
                      strerror(errno));
        return TP_ERR_IO;
    }
    return TP_OK;
}

tp_status tp_outfile_place(const char *tmp, const char *path, tp_diag *d)
{
    char target[TP_PATH_MAX];
    if (resolve_target(path, target, sizeof target) == 0)
        path = target;
    if (is_special(path))
        return copy_into(tmp, path, d);
    if (rename(tmp, path) != 0) {
        int e = errno;
        unlink(tmp);
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "cannot write %s: %s", path, strerror(e));
        return TP_ERR_IO;
    }
    return TP_OK;
}

tp_status tp_outfile_open(tp_outfile *o, const char *path, tp_diag *d)
{
    memset(o, 0, sizeof *o);
    if (strlen(path) >= sizeof o->path) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "output path too long: %s", path);
        return TP_ERR_IO;
    }
    strcpy(o->path, path);
    if (strcmp(path, "-") == 0) {
        o->fp = stdout;
        return TP_OK;
    }
    if (is_special(path)) {
        /* Written in place, like standard output (o->tmp stays empty). */
        o->fp = fopen(path, "w");
        if (!o->fp) {
            tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "cannot write %s: %s", path,
                          strerror(errno));
            return TP_ERR_IO;
        }
        return TP_OK;
    }
    if (resolve_target(path, o->path, sizeof o->path) != 0) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "output path too long: %s", path);
        return TP_ERR_IO;
    }
    path = o->path;
    if (tp_outfile_reserve(path, o->tmp, sizeof o->tmp, d) != TP_OK)
        return TP_ERR_IO;
    o->fp = fopen(o->tmp, "w");
    if (!o->fp) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "cannot write %s: %s", path,
                      strerror(errno));
        unlink(o->tmp);
        o->tmp[0] = '\0';
        return TP_ERR_IO;
    }
    return TP_OK;
}

tp_status tp_outfile_commit(tp_outfile *o, tp_diag *d)
{
    int bad;
    if (!o->fp)
        return TP_ERR_IO;
    if (o->fp == stdout) {
        bad = fflush(stdout) != 0 || ferror(stdout);
        o->fp = NULL;
        if (bad) {
            tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "cannot write to standard output");
            return TP_ERR_IO;
        }
        return TP_OK;
    }
    errno = 0;
    bad = fflush(o->fp) != 0 || ferror(o->fp);
    bad |= fclose(o->fp) != 0;
    o->fp = NULL;
    if (bad) {
        /* errno is that of the failed flush or close when they failed (an earlier failed
         * write alone leaves it 0 here). */
        int e = errno;
        tp_diag_error(d, tp_diag_loc_none(), NULL, "check free disk space", "cannot write %s%s%s",
                      o->path, e ? ": " : "", e ? strerror(e) : "");
        if (o->tmp[0])
            unlink(o->tmp);
        o->tmp[0] = '\0';
        return TP_ERR_IO;
    }
    if (!o->tmp[0])
        return TP_OK; /* a special file, written in place */
    if (tp_outfile_place(o->tmp, o->path, d) != TP_OK) {
        o->tmp[0] = '\0';
        return TP_ERR_IO;
    }
    o->tmp[0] = '\0';
    return TP_OK;
}

void tp_outfile_abort(tp_outfile *o)
{
    if (o->fp && o->fp != stdout)
        fclose(o->fp);
    o->fp = NULL;
    if (o->tmp[0])
        unlink(o->tmp);
    o->tmp[0] = '\0';
}

int tp_outfile_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (!a || !b || strcmp(a, "-") == 0 || strcmp(b, "-") == 0)
        return 0;
    if (stat(a, &sa) != 0 || stat(b, &sb) != 0)
        return 0;
    return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}
