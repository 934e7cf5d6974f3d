/* test_sha256.c — the batch's SHA-256 (src/cli/sha256.c, compiled into this test since
 * the CLI is not part of the library): the standard's published examples ("abc", the
 * 448-bit message and one million 'a', FIPS 180-2 appendix B; digests from memory) and
 * the empty message, all four checked against Debian's coreutils sha256sum when this
 * test was written (tests/xcheck_batch.sh also compares a key's digest with sha256sum at
 * run time), each through the plain rounds and, where the processor has them, the SHA
 * instructions; and both paths alike on inputs of every length 0..999, fed at once and
 * in pieces that cross the 64-byte blocks. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "cli/sha256.c"

/* The digest of msg (len bytes) fed in pieces of `piece` bytes (0: at once), with the
 * processor's instructions when accel and the machine has them, else the plain rounds. */
static void digest(const unsigned char *msg, size_t len, size_t piece, int accel,
                   char hex[CLI_SHA256_HEX])
{
    cli_sha256 s;
    cli_sha256_init(&s);
    if (!accel)
        s.accel = 0;
    if (piece == 0)
        piece = len ? len : 1;
    for (size_t at = 0; at < len; at += piece)
        cli_sha256_add(&s, msg + at, len - at < piece ? len - at : piece);
    cli_sha256_hex(&s, hex);
}

int main(void)
{
    static unsigned char million[1000000];
    memset(million, 'a', sizeof million);
    const char *abc = "abc", *m448 = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
    const struct {
        const char *name;
        const unsigned char *msg;
        size_t len;
        const char *want;
    } ex[] = {
        { "\"abc\"", (const unsigned char *)abc, 3,
          "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" },
        { "the empty message", (const unsigned char *)"", 0,
          "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855" },
        { "the 448-bit message", (const unsigned char *)m448, 56,
          "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1" },
        { "one million 'a'", million, sizeof million,
          "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0" },
    };
    cli_sha256 probe;
    cli_sha256_init(&probe);
    printf("# SHA instructions on this processor: %s\n", probe.accel ? "yes" : "no");
    for (size_t i = 0; i < sizeof ex / sizeof ex[0]; i++)
        for (int accel = 0; accel < 2; accel++) {
            char hex[CLI_SHA256_HEX], line[256];
            digest(ex[i].msg, ex[i].len, 0, accel, hex);
            snprintf(line, sizeof line, "SHA-256 of %s, %s: %s (published example)", ex[i].name,
                     accel && probe.accel ? "SHA instructions" : "plain rounds", hex);
            check_report(!strcmp(hex, ex[i].want), line);
        }
    /* both paths alike on every length and way of feeding (a fixed xorshift sequence) */
    static unsigned char buf[1000];
    uint64_t x = 88172645463325252u;
    for (size_t i = 0; i < sizeof buf; i++) {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        buf[i] = (unsigned char)x;
    }
    int same = 1;
    size_t pieces[3] = { 0, 7, 63 };
    for (size_t len = 0; len < sizeof buf; len++)
        for (int k = 0; k < 3; k++) {
            char a[CLI_SHA256_HEX], b[CLI_SHA256_HEX], c[CLI_SHA256_HEX];
            digest(buf, len, pieces[k], 0, a);
            digest(buf, len, pieces[k], 1, b);
            digest(buf, len, 0, 0, c);
            same &= !strcmp(a, b) && !strcmp(a, c);
        }
    check_report(same, "plain rounds and SHA instructions give the same digest for every "
                       "length 0..999, fed at once, by 7 and by 63 bytes");
    printf("%d passed, %d failed\n", check_passed, check_failed);
    return check_failed != 0;
}
