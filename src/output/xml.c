/* Text for XML documents (the SVG plots and the JUnit report): markup characters as entities,
 * and nothing that would make the document ill-formed -- XML 1.0 (W3C, 5th ed., 2008, sec. 2.2)
 * allows tab, line feed, carriage return and the characters from U+0020 up, UTF-8 encoded. */
#include <string.h>

#include "output/output.h"

#define REPLACEMENT "\xEF\xBF\xBD" /* U+FFFD, what stands for a byte that is not UTF-8 */

/* Length of the well-formed UTF-8 sequence at s (RFC 3629 sec. 4: no overlong forms, no
 * surrogates, nothing above U+10FFFF), 0 when there is none. */
static int utf8_len(const unsigned char *s)
{
    unsigned c = s[0];
    if (c < 0x80)
        return 1;
    int n;
    unsigned lo = 0x80, hi = 0xBF;
    if (c >= 0xC2 && c <= 0xDF)
        n = 2;
    else if (c >= 0xE0 && c <= 0xEF) {
        n = 3;
        if (c == 0xE0)
            lo = 0xA0;
        else if (c == 0xED)
            hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
        n = 4;
        if (c == 0xF0)
            lo = 0x90;
        else if (c == 0xF4)
            hi = 0x8F;
    } else
        return 0;
    if (s[1] < lo || s[1] > hi)
        return 0;
    for (int k = 2; k < n; k++)
        if (s[k] < 0x80 || s[k] > 0xBF)
            return 0;
    /* U+FFFE and U+FFFF are not XML characters */
    if (n == 3 && c == 0xEF && s[1] == 0xBF && (s[2] == 0xBE || s[2] == 0xBF))
        return 0;
    return n;
}

void xml_put_text(ss_strbuf *b, const char *text)
{
    const unsigned char *s = (const unsigned char *)text;
    while (*s) {
        unsigned c = *s;
        switch (c) {
        case '&': strbuf_append(b, "&amp;", 5); s++; continue;
        case '<': strbuf_append(b, "&lt;", 4); s++; continue;
        case '>': strbuf_append(b, "&gt;", 4); s++; continue;
        case '"': strbuf_append(b, "&quot;", 6); s++; continue;
        default: break;
        }
        if (c < 0x20) { /* control characters XML does not allow become spaces */
            strbuf_append(b, c == '\t' || c == '\n' || c == '\r' ? (const char *)s : " ", 1);
            s++;
            continue;
        }
        int n = utf8_len(s);
        if (n == 0) {
            strbuf_append(b, REPLACEMENT, 3);
            s++;
        } else {
            strbuf_append(b, (const char *)s, (size_t)n);
            s += n;
        }
    }
}
