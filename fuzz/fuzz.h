/* fuzz.h — the libFuzzer entry point shared by every target in fuzz/.
 * Each fuzz/fuzz_<target>.c defines LLVMFuzzerTestOneInput; it is linked either with libFuzzer
 * (the build-fuzz tree, clang -fsanitize=fuzzer) or with fuzz/replay_main.c (ctest replay of
 * fuzz/corpus/<target> and tests/fuzz_corpus/<target> in the normal and sanitizer builds). */
#ifndef ADDSITE_FUZZ_H
#define ADDSITE_FUZZ_H

#include <stddef.h>
#include <stdint.h>

/* Runs one input. Returns 0 (libFuzzer convention); an invariant broken by the library is
 * reported by fuzz_fail, which aborts so both libFuzzer and the replay driver see a crash. */
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Prints what went wrong and aborts. */
void fuzz_fail(const char *what, const char *detail);

#endif
