/* The replay driver every harness shares: built with -DFUZZ_REPLAY_MAIN, a
 * harness is a plain program that runs LLVMFuzzerTestOneInput on each file
 * named (and on each file of a directory named, in name order), without
 * libFuzzer.  The harness defines MAX_INPUT_BYTES (longer files are cut)
 * and may define FUZZ_REPLAY_SETUP() (run once before the first input)
 * before including this file. */
#ifndef SHEAF_FUZZ_REPLAY_MAIN_H
#define SHEAF_FUZZ_REPLAY_MAIN_H

#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/stat.h>

#ifndef FUZZ_REPLAY_SETUP
#define FUZZ_REPLAY_SETUP() ((void)0)
#endif

static int replay_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) { fprintf(stderr, "%s: cannot open\n", path); return -1; }
    uint8_t *buf = malloc(MAX_INPUT_BYTES);
    size_t n = buf ? fread(buf, 1, MAX_INPUT_BYTES, f) : 0;
    fclose(f);
    if (!buf) return -1;
    fprintf(stderr, "replay %s (%zu bytes)\n", path, n);
    LLVMFuzzerTestOneInput(buf, n);
    free(buf);
    return 0;
}

int main(int argc, char **argv)
{
    int files = 0, bad = 0;
    FUZZ_REPLAY_SETUP();
    for (int i = 1; i < argc; i++) {
        struct stat st;
        if (stat(argv[i], &st) != 0) { fprintf(stderr, "%s: not found\n", argv[i]); bad++; continue; }
        if (!S_ISDIR(st.st_mode)) { bad += replay_file(argv[i]) != 0; files++; continue; }
        struct dirent **list;
        int n = scandir(argv[i], &list, NULL, alphasort);
        for (int k = 0; k < n; k++) {
            if (list[k]->d_name[0] != '.') {
                char p[4096];
                snprintf(p, sizeof p, "%s/%s", argv[i], list[k]->d_name);
                bad += replay_file(p) != 0;
                files++;
            }
            free(list[k]);
        }
        free(n >= 0 ? list : NULL);
    }
    printf("replayed %d inputs, %d unreadable\n", files, bad);
    return bad ? 1 : 0;
}

#endif
