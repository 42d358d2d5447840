/* Test helper shared by the test programs that run tepid in scratch directories: remove a
 * directory tree. Header-only (static) because each test file is its own executable. */
#ifndef TP_TESTFS_H
#define TP_TESTFS_H

#include <dirent.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* Remove `path` and everything below it; symbolic links are removed, never followed. Read-only
 * directories are made writable first. Errors are ignored (best effort at teardown). */
static void testfs_remove_tree(const char *path)
{
    struct stat st;
    DIR *dp;
    struct dirent *e;
    if (lstat(path, &st) != 0)
        return;
    if (!S_ISDIR(st.st_mode)) {
        unlink(path);
        return;
    }
    chmod(path, 0700);
    dp = opendir(path);
    if (dp) {
        while ((e = readdir(dp))) {
            char sub[8192];
            if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
                continue;
            snprintf(sub, sizeof sub, "%s/%s", path, e->d_name);
            testfs_remove_tree(sub);
        }
        closedir(dp);
    }
    rmdir(path);
}

#endif
