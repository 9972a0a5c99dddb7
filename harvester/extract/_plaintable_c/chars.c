/* Characters: growable buffers, white space, UTF-8 and character references. */
#include "plaintable.h"

/* ------------------------------------------------------------------------------------------ */
/* Growable buffers                                                                            */

int bytes_reserve(Bytes *b, Py_ssize_t extra) {
    if (b->len + extra <= b->cap) return 0;
    Py_ssize_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + extra) cap *= 2;
    char *data = PyMem_Realloc(b->data, (size_t)cap);
    if (!data) return -1;
    b->data = data;
    b->cap = cap;
    return 0;
}

/* ------------------------------------------------------------------------------------------ */
/* Characters                                                                                  */

const uint32_t SPACES[] = {0x09, 0x0A, 0x0B, 0x0C, 0x0D, 0x1C, 0x1D, 0x1E, 0x1F, 0x20,
                                  0x85, 0xA0, 0x1680, 0x2000, 0x2001, 0x2002, 0x2003, 0x2004,
                                  0x2005, 0x2006, 0x2007, 0x2008, 0x2009, 0x200A, 0x2028, 0x2029,
                                  0x202F, 0x205F, 0x3000};
const size_t SPACES_COUNT = sizeof SPACES / sizeof SPACES[0];

int is_space(uint32_t c) {
    if (c == 0x20 || (c >= 0x09 && c <= 0x0D)) return 1;
    if (c < 0x85) return c >= 0x1C && c <= 0x1F;
    for (size_t i = 10; i < SPACES_COUNT; i++)
        if (SPACES[i] == c) return 1;
    return 0;
}





/* Named character references the reader decodes, each written with its semicolon (HTML
 * §13.5, the named character references table). Any other reference sends the table to the
 * DOM path. */
static const struct { const char *name; uint32_t cp; } NAMED[] = {
    {"amp", '&'}, {"lt", '<'}, {"gt", '>'}, {"quot", '"'}, {"apos", '\''}, {"nbsp", 0xA0},
    {"ndash", 0x2013}, {"mdash", 0x2014}, {"minus", 0x2212}, {"middot", 0xB7},
    {"dagger", 0x2020}, {"Dagger", 0x2021}, {"deg", 0xB0}, {"hellip", 0x2026},
    {"times", 0xD7}, {"copy", 0xA9}, {"reg", 0xAE}, {"trade", 0x2122}, {"laquo", 0xAB},
    {"raquo", 0xBB}, {"lsquo", 0x2018}, {"rsquo", 0x2019}, {"ldquo", 0x201C},
    {"rdquo", 0x201D}, {"bull", 0x2022}, {"sect", 0xA7}, {"para", 0xB6}, {"frac12", 0xBD},
    {"frac14", 0xBC}, {"frac34", 0xBE}, {"plusmn", 0xB1}, {"euro", 0x20AC}, {"pound", 0xA3},
    {"yen", 0xA5}, {"cent", 0xA2},
};

/* A character reference at p ('&'). Returns the bytes it takes (> 0) with *cp set; 0 when
 * '&' is a plain ampersand (nothing reference-like follows); -1 when the reader cannot be
 * sure what the parser does (the table goes to the DOM path). */
Py_ssize_t char_ref(const unsigned char *p, const unsigned char *end, uint32_t *cp) {
    const unsigned char *q = p + 1;
    if (q < end && *q == '#') {
        q++;
        int hex = q < end && (*q == 'x' || *q == 'X');
        if (hex) q++;
        uint32_t value = 0;
        int digits = 0;
        while (q < end && digits <= 7) {
            unsigned char c = *q;
            int d = (c >= '0' && c <= '9') ? c - '0'
                    : (hex && c >= 'a' && c <= 'f') ? c - 'a' + 10
                    : (hex && c >= 'A' && c <= 'F') ? c - 'A' + 10 : -1;
            if (d < 0) break;
            value = value * (hex ? 16 : 10) + (uint32_t)d;
            digits++;
            q++;
        }
        if (digits == 0 || digits > 7 || q >= end || *q != ';') return -1;
        /* §13.2.5.80: 0, surrogates, past U+10FFFF, controls and C1 remapping are the cases a
         * plain reader would get wrong: refused here. */
        if (value == 0 || value > 0x10FFFF || (value >= 0xD800 && value <= 0xDFFF)) return -1;
        if (refused(value) || value == 0x0D) return -1;
        *cp = value;
        return q + 1 - p;
    }
    if (q >= end) return 0;
    unsigned char c = *q;
    if (!((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9')))
        return 0; /* "&" then a space or punctuation: an ampersand (§13.2.5.72) */
    const unsigned char *name = q;
    while (q < end && q - name < 16 &&
           ((*q >= 'a' && *q <= 'z') || (*q >= 'A' && *q <= 'Z') || (*q >= '0' && *q <= '9')))
        q++;
    if (q >= end || *q != ';') return -1;
    size_t len = (size_t)(q - name);
    for (size_t i = 0; i < sizeof NAMED / sizeof NAMED[0]; i++) {
        if (strlen(NAMED[i].name) == len && memcmp(NAMED[i].name, name, len) == 0) {
            *cp = NAMED[i].cp;
            return q + 1 - p;
        }
    }
    return -1;
}
