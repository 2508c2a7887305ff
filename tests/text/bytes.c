/* bytes: the offset text_find_bad_byte gives for every byte string of a set
 * that tests/text/check.py builds the same way and judges with Python's
 * own UTF-8 decoder: every string of one and two bytes, three-byte strings
 * from each lead byte 0xE0..0xEF with every second byte and a choice of
 * third ones, and four-byte strings from each lead 0xF0..0xF7 likewise.
 * Prints one offset a line (-1: every byte is good). */
#include <stdio.h>

#include "loopwise/text.h"

static const unsigned char third[] = { 0x00, 0x09, 0x41, 0x7F, 0x80, 0x9F, 0xA0, 0xBF, 0xC0, 0xFF };
static const unsigned char fourth[] = { 0x41, 0x80, 0xBF };

static void one(const unsigned char *s, size_t n)
{
    char what[160];
    int kind;
    printf("%ld\n", text_find_bad_byte((const char *)s, n, "the end", &kind, what, sizeof what));
}

int main(void)
{
    unsigned char s[4];
    for (int a = 0; a < 256; a++) {
        s[0] = (unsigned char)a;
        one(s, 1);
    }
    for (int a = 0; a < 256; a++)
        for (int b = 0; b < 256; b++) {
            s[0] = (unsigned char)a;
            s[1] = (unsigned char)b;
            one(s, 2);
        }
    for (int a = 0xE0; a <= 0xEF; a++)
        for (int b = 0; b < 256; b++)
            for (size_t c = 0; c < sizeof third; c++) {
                s[0] = (unsigned char)a;
                s[1] = (unsigned char)b;
                s[2] = third[c];
                one(s, 3);
            }
    for (int a = 0xF0; a <= 0xF7; a++)
        for (int b = 0; b < 256; b++)
            for (size_t c = 0; c < sizeof fourth; c++)
                for (size_t d = 0; d < sizeof fourth; d++) {
                    s[0] = (unsigned char)a;
                    s[1] = (unsigned char)b;
                    s[2] = fourth[c];
                    s[3] = fourth[d];
                    one(s, 4);
                }
    return fflush(stdout) ? 1 : 0;
}
