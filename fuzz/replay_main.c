/* replay_main.c — runs a fuzz target over saved inputs without libFuzzer, so the ordinary and
 * sanitizer builds keep every crasher and seed fixed: `replay_<target> DIR_OR_FILE ...`.
 * Each file is read whole and passed to LLVMFuzzerTestOneInput once. Prints one line per
 * argument and a total; a path that cannot be read is an error (exit 2), a crash is the test
 * failing. */
#include "fuzz.h"

#include <dirent.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

static int run_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: cannot open %s: %s\n", path, strerror(errno));
        return -1;
    }
    size_t cap = 4096, len = 0;
    unsigned char *buf = malloc(cap);
    if (!buf) {
        fclose(f);
        return -1;
    }
    size_t n;
    while ((n = fread(buf + len, 1, cap - len, f)) > 0) {
        len += n;
        if (len == cap) {
            unsigned char *nb = realloc(buf, cap * 2);
            if (!nb) {
                free(buf);
                fclose(f);
                return -1;
            }
            buf = nb;
            cap *= 2;
        }
    }
    int bad = ferror(f);
    fclose(f);
    if (bad) {
        fprintf(stderr, "replay: read error on %s\n", path);
        free(buf);
        return -1;
    }
    /* hand over an exact-size copy so ASan catches any read past the end */
    unsigned char *exact = malloc(len ? len : 1);
    if (!exact) {
        free(buf);
        return -1;
    }
    memcpy(exact, buf, len);
    free(buf);
    LLVMFuzzerTestOneInput(exact, len);
    free(exact);
    return 0;
}

static int cmp_names(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Replays every regular file in dir (sorted, dot files skipped). Returns files run or -1. */
static long run_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d) {
        fprintf(stderr, "replay: cannot open directory %s: %s\n", dir, strerror(errno));
        return -1;
    }
    char **names = NULL;
    size_t n = 0, cap = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        if (n == cap) {
            cap = cap ? cap * 2 : 64;
            char **nn = realloc(names, cap * sizeof *nn);
            if (!nn)
                break;
            names = nn;
        }
        names[n] = strdup(e->d_name);
        if (names[n])
            n++;
    }
    closedir(d);
    qsort(names, n, sizeof *names, cmp_names);
    long ran = 0;
    int failed = 0;
    for (size_t i = 0; i < n; i++) {
        size_t plen = strlen(dir) + strlen(names[i]) + 2;
        char *path = malloc(plen);
        if (path) {
            snprintf(path, plen, "%s/%s", dir, names[i]);
            struct stat st;
            if (stat(path, &st) == 0 && S_ISREG(st.st_mode)) {
                if (run_file(path) == 0)
                    ran++;
                else
                    failed = 1;
            }
            free(path);
        }
        free(names[i]);
    }
    free(names);
    return failed ? -1 : ran;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: replay_TARGET DIR_OR_FILE ...\n");
        return 2;
    }
    long total = 0;
    for (int i = 1; i < argc; i++) {
        struct stat st;
        if (stat(argv[i], &st) != 0) {
            fprintf(stderr, "replay: %s: %s\n", argv[i], strerror(errno));
            return 2;
        }
        long ran;
        if (S_ISDIR(st.st_mode))
            ran = run_dir(argv[i]);
        else
            ran = run_file(argv[i]) == 0 ? 1 : -1;
        if (ran < 0)
            return 2;
        printf("%s: %ld inputs replayed\n", argv[i], ran);
        total += ran;
    }
    printf("%ld inputs replayed without a crash\n", total);
    return 0;
}
