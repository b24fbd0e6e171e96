/* fuzz_common.h -- what the libFuzzer harnesses share: the fuzz input
 * written to an anonymous in-memory file (memfd) so that APIs taking a path
 * can read it as "/proc/self/fd/N", without touching the disk.
 *
 * Test-only code, built only in a clang build (tests/fuzz/meson.build). */
#ifndef VECSIFT_FUZZ_COMMON_H
#define VECSIFT_FUZZ_COMMON_H

#define _GNU_SOURCE
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>

/* A memfd holding data[0..size), rewound.  Its path is written to 'path'.
 * Aborts when the kernel refuses (not the input's fault). */
static inline int fuzz_memfd(const uint8_t *data, size_t size, char path[64])
{
    int fd = memfd_create("vecsift-fuzz", MFD_CLOEXEC);
    if (fd < 0) {
        perror("memfd_create");
        abort();
    }
    size_t done = 0;
    while (done < size) {
        ssize_t w = write(fd, data + done, size - done);
        if (w <= 0) {
            perror("write");
            abort();
        }
        done += (size_t)w;
    }
    lseek(fd, 0, SEEK_SET);
    snprintf(path, 64, "/proc/self/fd/%d", fd);
    return fd;
}

#endif
