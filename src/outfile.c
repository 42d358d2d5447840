/* Atomic output files: temporary file in the target's directory, then rename(2). */
#define _DEFAULT_SOURCE /* mkstemps */
#include "outfile.h"

#include <errno.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <fcntl.h>
#include <stdlib.h>

static int make_tmp_name(const char *path, const char *suffix, char *tmp, size_t size)
{
    const char *slash = strrchr(path, '/');
    const char *base = slash ? slash + 1 : path;
    int dirlen = slash ? (int)(slash - path + 1) : 0;
    int n = snprintf(tmp, size, "%.*s.%s.XXXXXX%s", dirlen, path, base, suffix);
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

tp_status tp_outfile_reserve(const char *path, char *tmp, size_t tmp_size, tp_diag *d)
{
    const char *ext = extension(path);
    int fd;
    if (strlen(path) >= TP_PATH_MAX - 32 || !make_tmp_name(path, ext, tmp, tmp_size)) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "output path too long: %s", path);
        return TP_ERR_IO;
    }
    fd = mkstemps(tmp, (int)strlen(ext));
    if (fd < 0) {
        tp_diag_error(d, tp_loc_none(), NULL, "check that the directory exists and is writable",
                      "cannot create an output file beside %s: %s", path, strerror(errno));
        tmp[0] = '\0';
        return TP_ERR_IO;
    }
    {
        /* mkstemps creates mode 0600; give the result the permissions a plain fopen would. */
        mode_t mask = umask(0);
        umask(mask);
        (void)fchmod(fd, 0666 & ~mask);
    }
    close(fd);
    return TP_OK;
}

tp_status tp_outfile_place(const char *tmp, const char *path, tp_diag *d)
{
    if (rename(tmp, path) != 0) {
        int e = errno;
        unlink(tmp);
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "cannot write %s: %s", path, strerror(e));
        return TP_ERR_IO;
    }
    return TP_OK;
}

tp_status tp_outfile_open(tp_outfile *o, const char *path, tp_diag *d)
{
    memset(o, 0, sizeof *o);
    if (strlen(path) >= sizeof o->path) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "output path too long: %s", path);
        return TP_ERR_IO;
    }
    strcpy(o->path, path);
    if (strcmp(path, "-") == 0) {
        o->fp = stdout;
        return TP_OK;
    }
    if (tp_outfile_reserve(path, o->tmp, sizeof o->tmp, d) != TP_OK)
        return TP_ERR_IO;
    o->fp = fopen(o->tmp, "w");
    if (!o->fp) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "cannot write %s: %s", path, strerror(errno));
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
            tp_diag_error(d, tp_loc_none(), NULL, NULL, "cannot write to standard output");
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
        tp_diag_error(d, tp_loc_none(), NULL, "check free disk space", "cannot write %s%s%s",
                      o->path, e ? ": " : "", e ? strerror(e) : "");
        unlink(o->tmp);
        o->tmp[0] = '\0';
        return TP_ERR_IO;
    }
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

int tp_path_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (!a || !b || strcmp(a, "-") == 0 || strcmp(b, "-") == 0)
        return 0;
    if (stat(a, &sa) != 0 || stat(b, &sb) != 0)
        return 0;
    return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}
