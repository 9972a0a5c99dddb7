/* The compiled reader of plain tables: harvester.extract._plaintable.
 *
 * It reads the bytes of one HTML table straight from the page and forms its grid as
 * harvester/extract/grid.py does over lexbor's tree, for tables it can read exactly: tags from
 * a short list, no comments, no nested tables, no text outside cells and captions, character
 * references from a safe set, valid UTF-8. End tags are implied where the HTML parser implies
 * them (HTML §13.2.6.4.9 "in table" to §13.2.6.4.15 "in cell"). On anything else it returns
 * None and the caller uses the DOM path, which stays the reference.
 *
 * It depends on no library's layout: only CPython's stable C API and the page's bytes.
 *
 *   scan_tables(data, noscript_raw) -> (list[int], list[bool]) | None
 *       the offset of every "<table" start tag the HTML tokenizer would see, in document order,
 *       and whether each opens while no other table is open (None when the page has markup
 *       this scanner does not follow: foreign content with scripts, styles, CDATA or tables in
 *       it, plaintext, template, a table in a select).
 *   plain_extent(data, offset) -> (content, close, end) | None
 *       whether the table at offset is plain, and where its content and end tag are.
 *   read_table(data, offset, max_slots, drop_hidden) -> tuple | None | int
 *       the grid of the table whose start tag is at offset; None when the table is not plain;
 *       -1 when the grid would pass max_slots (the DOM path then says so).
 *   space_code_points() -> tuple[int, ...]
 *       the code points this module collapses as white space (Python's str.split set; checked
 *       against Python at import by fastpath.py).
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>
#include <string.h>

#define MAX_COLSPAN 1000
#define MAX_ROWSPAN 65534
#define MAX_COLGROUP_SPAN 1000
#define MAX_INLINE_DEPTH 32

/* ------------------------------------------------------------------------------------------ */
/* Growable buffers                                                                            */

typedef struct {
    char *data;
    Py_ssize_t len, cap;
} Bytes;

static int bytes_reserve(Bytes *b, Py_ssize_t extra) {
    if (b->len + extra <= b->cap) return 0;
    Py_ssize_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + extra) cap *= 2;
    char *data = PyMem_Realloc(b->data, (size_t)cap);
    if (!data) return -1;
    b->data = data;
    b->cap = cap;
    return 0;
}

typedef struct { /* 24 bytes: pages past 2 GB are not read here (read_table checks) */
    uint32_t text_start, text_len; /* into the text buffer */
    int32_t href_start;            /* into the links buffer; < 0: no link */
    uint32_t href_len;
    uint16_t colspan, rowspan; /* parsed as §2.3.4.2 with the clamps of §4.9.12.1 */
    char header;
} CellRec;

typedef struct {
    Py_ssize_t first_cell, n_cells;
} RowRec;

typedef struct {
    char kind; /* 'h' thead, 'b' tbody, 'f' tfoot */
    Py_ssize_t first_row;        /* its rows run to the next group's first row */
} GroupRec;

#define VEC(T) struct { T *items; Py_ssize_t len, cap; }
typedef VEC(CellRec) CellVec;
typedef VEC(RowRec) RowVec;
typedef VEC(GroupRec) GroupVec;

#define VEC_PUSH(v, value, fail)                                                             \
    do {                                                                                     \
        if ((v).len == (v).cap) {                                                            \
            Py_ssize_t cap_ = (v).cap ? (v).cap * 2 : 64;                                    \
            void *items_ = PyMem_Realloc((v).items, (size_t)cap_ * sizeof(*(v).items));      \
            if (!items_) goto fail;                                                          \
            (v).items = items_;                                                              \
            (v).cap = cap_;                                                                  \
        }                                                                                    \
        (v).items[(v).len++] = (value);                                                      \
    } while (0)

/* ------------------------------------------------------------------------------------------ */
/* Characters                                                                                  */

static const uint32_t SPACES[] = {0x09, 0x0A, 0x0B, 0x0C, 0x0D, 0x1C, 0x1D, 0x1E, 0x1F, 0x20,
                                  0x85, 0xA0, 0x1680, 0x2000, 0x2001, 0x2002, 0x2003, 0x2004,
                                  0x2005, 0x2006, 0x2007, 0x2008, 0x2009, 0x200A, 0x2028, 0x2029,
                                  0x202F, 0x205F, 0x3000};

static int is_space(uint32_t c) {
    if (c == 0x20 || (c >= 0x09 && c <= 0x0D)) return 1;
    if (c < 0x85) return c >= 0x1C && c <= 0x1F;
    for (size_t i = 10; i < sizeof SPACES / sizeof SPACES[0]; i++)
        if (SPACES[i] == c) return 1;
    return 0;
}

static int is_html_space(unsigned char c) { /* ASCII white space, HTML §2.3.1 (infra) */
    return c == ' ' || c == '\t' || c == '\n' || c == '\f' || c == '\r';
}

/* Characters the reader refuses in text: C0 and C1 controls other than white space (the parser
 * keeps most but reports them), NUL (dropped in cells), and noncharacters. */
static int refused(uint32_t c) {
    if (c < 0x20) return !(c == 0x09 || c == 0x0A || c == 0x0C || c == 0x0D);
    if (c >= 0x7F && c <= 0x9F) return 1;
    if (c >= 0xFDD0 && c <= 0xFDEF) return 1;
    if ((c & 0xFFFE) == 0xFFFE) return 1;
    return 0;
}

/* Decode one UTF-8 sequence at p (< end); returns its length, or 0 if it is not valid UTF-8. */
static int utf8_decode(const unsigned char *p, const unsigned char *end, uint32_t *out) {
    unsigned char c = p[0];
    if (c < 0x80) { *out = c; return 1; }
    int n;
    uint32_t cp, min;
    if (c >= 0xC2 && c <= 0xDF) { n = 2; cp = c & 0x1F; min = 0x80; }
    else if (c >= 0xE0 && c <= 0xEF) { n = 3; cp = c & 0x0F; min = 0x800; }
    else if (c >= 0xF0 && c <= 0xF4) { n = 4; cp = c & 0x07; min = 0x10000; }
    else return 0;
    if (end - p < n) return 0;
    for (int i = 1; i < n; i++) {
        if ((p[i] & 0xC0) != 0x80) return 0;
        cp = (cp << 6) | (p[i] & 0x3F);
    }
    if (cp < min || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF)) return 0;
    *out = cp;
    return n;
}

static int utf8_encode(uint32_t c, char *out) {
    if (c < 0x80) { out[0] = (char)c; return 1; }
    if (c < 0x800) { out[0] = (char)(0xC0 | (c >> 6)); out[1] = (char)(0x80 | (c & 0x3F)); return 2; }
    if (c < 0x10000) {
        out[0] = (char)(0xE0 | (c >> 12)); out[1] = (char)(0x80 | ((c >> 6) & 0x3F));
        out[2] = (char)(0x80 | (c & 0x3F)); return 3;
    }
    out[0] = (char)(0xF0 | (c >> 18)); out[1] = (char)(0x80 | ((c >> 12) & 0x3F));
    out[2] = (char)(0x80 | ((c >> 6) & 0x3F)); out[3] = (char)(0x80 | (c & 0x3F)); return 4;
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
static Py_ssize_t char_ref(const unsigned char *p, const unsigned char *end, uint32_t *cp) {
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

/* ------------------------------------------------------------------------------------------ */
/* Tags                                                                                        */

enum {
    T_OTHER, T_TABLE, T_CAPTION, T_COLGROUP, T_COL, T_THEAD, T_TBODY, T_TFOOT, T_TR, T_TD, T_TH,
    T_BR, T_VOID_INLINE, T_A, T_INLINE,
};

static int tag_id(const char *name, Py_ssize_t len) {
#define IS(s) (len == (Py_ssize_t)sizeof(s) - 1 && memcmp(name, s, sizeof(s) - 1) == 0)
    /* The table's own tags first, by length: they are nearly every tag of a large table. */
    switch (len) {
    case 1:
        if (name[0] == 'a') return T_A;
        if (name[0] == 'b' || name[0] == 'i' || name[0] == 'u' || name[0] == 's' ||
            name[0] == 'q')
            return T_INLINE;
        return T_OTHER;
    case 2:
        if (name[0] == 't') {
            if (name[1] == 'd') return T_TD;
            if (name[1] == 'r') return T_TR;
            if (name[1] == 'h') return T_TH;
        }
        if (IS("br")) return T_BR;
        break;
    case 5:
        if (IS("table")) return T_TABLE;
        if (IS("tbody")) return T_TBODY;
        if (IS("thead")) return T_THEAD;
        if (IS("tfoot")) return T_TFOOT;
        break;
    case 3:
        if (IS("col")) return T_COL;
        if (IS("img") || IS("wbr")) return T_VOID_INLINE;
        break;
    case 7:
        if (IS("caption")) return T_CAPTION;
        break;
    case 8:
        if (IS("colgroup")) return T_COLGROUP;
        break;
    }
    /* Phrasing elements with no special parsing rules inside a cell, once properly nested
     * (§13.2.6.4.7 "in body": formatting elements and "any other start tag"). */
    if (IS("span") || IS("em") || IS("strong") || IS("small") || IS("abbr") || IS("sup") ||
        IS("sub") || IS("code") || IS("time") || IS("data") || IS("cite") || IS("dfn") ||
        IS("kbd") || IS("samp") || IS("var") || IS("mark") || IS("bdi") || IS("bdo") ||
        IS("font"))
        return T_INLINE;
    return T_OTHER;
#undef IS
}

typedef struct {
    int id;
    int end;             /* an end tag */
    char name[16];       /* lower-case name (inline tags are matched by name) */
    Py_ssize_t name_len;
    /* The attributes the grid reads, first of each name wins (§13.2.5.33). */
    Py_ssize_t colspan_start, colspan_len, rowspan_start, rowspan_len, span_start, span_len;
    Py_ssize_t href_start, href_len;
    int has_colspan, has_rowspan, has_span, has_href, has_hidden_or_style;
} Tag;

typedef struct {
    const unsigned char *start, *end, *p;
    Bytes text;      /* cell and caption texts, collapsed, UTF-8 */
    Bytes links;     /* the href of each cell's first link, decoded, UTF-8 */
    Bytes attrs;     /* decoded attribute values of the current tag */
    int drop_hidden;
    int check_only;  /* only say whether the table is plain: keep no cells, rows or texts */
    const unsigned char *close; /* where the table's end tag starts, once read */
} Reader;

/* Append a decoded attribute value (from p to q) to r->attrs; -1 when not plain. */
static int attr_value(Reader *r, const unsigned char *p, const unsigned char *q) {
    if (bytes_reserve(&r->attrs, q - p) < 0) return -2; /* decoding never makes a value longer */
    while (p < q) {
        unsigned char c = *p;
        if (c >= 0x20 && c < 0x7F && c != '&') { /* the common case, copied inline */
            r->attrs.data[r->attrs.len++] = (char)c;
            p++;
            continue;
        }
        if (c == '&') {
            uint32_t cp;
            Py_ssize_t n = char_ref(p, q, &cp);
            if (n < 0) return -1;
            if (n > 0) {
                if (bytes_reserve(&r->attrs, 4) < 0) return -2;
                r->attrs.len += utf8_encode(cp, r->attrs.data + r->attrs.len);
                p += n;
                continue;
            }
        }
        if (c == '\r') { /* §13.2.3.5: CR LF and lone CR become LF */
            if (bytes_reserve(&r->attrs, 1) < 0) return -2;
            r->attrs.data[r->attrs.len++] = '\n';
            p += (p + 1 < q && p[1] == '\n') ? 2 : 1;
            continue;
        }
        uint32_t cp;
        int n = utf8_decode(p, q, &cp);
        if (n == 0 || cp == 0 || refused(cp)) return -1;
        if (bytes_reserve(&r->attrs, n) < 0) return -2;
        memcpy(r->attrs.data + r->attrs.len, p, (size_t)n);
        r->attrs.len += n;
        p += n;
    }
    return 0;
}

/* Read the tag at r->p ('<' then a letter, or '</' then a letter) into *t. Returns 0, -1 when
 * the tag is not plain, -2 on memory error. With `attributes`, the start tag's attributes are
 * also set as items of that dict (for the caller to compare with the DOM's). */
static int read_tag(Reader *r, Tag *t, PyObject *attributes) {
    const unsigned char *p = r->p + 1, *end = r->end;
    memset(t, 0, sizeof *t);
    t->href_start = -1;
    r->attrs.len = 0;
    if (*p == '/') { t->end = 1; p++; }
    const unsigned char *name = p;
    while (p < end && !is_html_space(*p) && *p != '/' && *p != '>') {
        unsigned char c = *p;
        if (!((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9')))
            return -1;
        p++;
    }
    Py_ssize_t len = p - name;
    if (len == 0 || len >= (Py_ssize_t)sizeof t->name) {
        if (len == 0) return -1;
        t->id = T_OTHER;
    } else {
        for (Py_ssize_t i = 0; i < len; i++) {
            unsigned char c = name[i];
            t->name[i] = (char)((c >= 'A' && c <= 'Z') ? c + 32 : c);
        }
        t->name_len = len;
        t->id = tag_id(t->name, len);
    }
    for (;;) {
        while (p < end && is_html_space(*p)) p++;
        if (p >= end) return -1;
        if (*p == '>') { p++; break; }
        if (*p == '/') {
            p++;
            if (p < end && *p == '>') { p++; break; }
            continue; /* §13.2.5.40: a stray solidus is dropped */
        }
        if (t->end) return -1; /* attributes on an end tag: a parse error we do not follow */
        const unsigned char *attr = p;
        if (*p == '=') return -1;
        while (p < end && !is_html_space(*p) && *p != '/' && *p != '>' && *p != '=') {
            if (*p == '"' || *p == '\'' || *p == '<' || *p >= 0x80 || *p < 0x20) return -1;
            p++;
        }
        char attr_name[64];
        Py_ssize_t attr_len = p - attr;
        if (attr_len >= (Py_ssize_t)sizeof attr_name) return -1;
        for (Py_ssize_t i = 0; i < attr_len; i++)
            attr_name[i] = (char)((attr[i] >= 'A' && attr[i] <= 'Z') ? attr[i] + 32 : attr[i]);
        attr_name[attr_len] = 0;
        while (p < end && is_html_space(*p)) p++;
        Py_ssize_t value_start = r->attrs.len;
        if (p < end && *p == '=') {
            p++;
            while (p < end && is_html_space(*p)) p++;
            if (p >= end) return -1;
            const unsigned char *v, *vend;
            if (*p == '"' || *p == '\'') {
                unsigned char quote = *p++;
                v = p;
                while (p < end && *p != quote) p++;
                if (p >= end) return -1;
                vend = p++;
            } else {
                v = p;
                while (p < end && !is_html_space(*p) && *p != '>') {
                    if (*p == '"' || *p == '\'' || *p == '<' || *p == '=' || *p == '`') return -1;
                    p++;
                }
                vend = p;
            }
            int status = attr_value(r, v, vend);
            if (status < 0) return status;
        }
        Py_ssize_t value_len = r->attrs.len - value_start;
#define ATTR(s) (attr_len == (Py_ssize_t)sizeof(s) - 1 && memcmp(attr_name, s, sizeof(s) - 1) == 0)
        int first = 1;
        if (attributes) {
            PyObject *key = PyUnicode_FromStringAndSize(attr_name, attr_len);
            if (!key) return -2;
            first = !PyDict_Contains(attributes, key);
            if (first) {
                PyObject *value = PyUnicode_DecodeUTF8(r->attrs.data + value_start, value_len,
                                                       "strict");
                if (!value || PyDict_SetItem(attributes, key, value) < 0) {
                    Py_XDECREF(value);
                    Py_DECREF(key);
                    return -2;
                }
                Py_DECREF(value);
            }
            Py_DECREF(key);
        }
        if (ATTR("colspan") && !t->has_colspan) {
            t->has_colspan = 1; t->colspan_start = value_start; t->colspan_len = value_len;
        } else if (ATTR("rowspan") && !t->has_rowspan) {
            t->has_rowspan = 1; t->rowspan_start = value_start; t->rowspan_len = value_len;
        } else if (ATTR("span") && !t->has_span) {
            t->has_span = 1; t->span_start = value_start; t->span_len = value_len;
        } else if (ATTR("href") && !t->has_href) {
            t->has_href = 1; t->href_start = value_start; t->href_len = value_len;
        } else if (ATTR("hidden") || ATTR("style")) {
            t->has_hidden_or_style = 1;
        }
        (void)first;
#undef ATTR
    }
    r->p = p;
    return 0;
}

/* HTML's rules for parsing non-negative integers (§2.3.4.2) with the clamps of forming a table
 * (§4.9.12.1), exactly as cells.parse_span does. */
static int parse_span(const char *v, Py_ssize_t len, int present, int deflt, int minimum,
                      int maximum) {
    if (!present) return deflt;
    Py_ssize_t i = 0;
    while (i < len && is_html_space((unsigned char)v[i])) i++;
    int negative = 0;
    if (i < len && (v[i] == '+' || v[i] == '-')) { negative = v[i] == '-'; i++; }
    if (i >= len || v[i] < '0' || v[i] > '9') return deflt;
    long long number = 0;
    while (i < len && v[i] >= '0' && v[i] <= '9') {
        if (number <= 1000000000LL) number = number * 10 + (v[i] - '0');
        i++;
    }
    if (negative && number != 0) return deflt;
    if (number < minimum) return deflt;
    return number > maximum ? maximum : (int)number;
}

/* ------------------------------------------------------------------------------------------ */
/* Text                                                                                        */

typedef struct {
    int pending_space; /* white space seen since the last character written */
    Py_ssize_t start;  /* where this text starts in r->text */
} TextRun;

static int text_char(Reader *r, TextRun *run, uint32_t cp) {
    if (is_space(cp)) {
        run->pending_space = 1;
        return 0;
    }
    if (bytes_reserve(&r->text, 5) < 0) return -2;
    if (run->pending_space && r->text.len > run->start) r->text.data[r->text.len++] = ' ';
    run->pending_space = 0;
    r->text.len += utf8_encode(cp, r->text.data + r->text.len);
    return 0;
}

/* Read character data up to the next '<' into the current text run: -1 when not plain. */
static int read_text(Reader *r, TextRun *run) {
    const unsigned char *p = r->p, *end = r->end;
    while (p < end && *p != '<') {
        unsigned char c = *p;
        uint32_t cp;
        Py_ssize_t n;
        if (c == '&') {
            n = char_ref(p, end, &cp);
            if (n < 0) return -1;
            if (n == 0) { cp = '&'; n = 1; }
        } else if (c < 0x80) {
            if (refused(c)) return -1;
            if (c != ' ' && !(c >= 0x09 && c <= 0x0D)) { /* the common case, written inline */
                if (bytes_reserve(&r->text, 2) < 0) return -2;
                if (run->pending_space && r->text.len > run->start)
                    r->text.data[r->text.len++] = ' ';
                run->pending_space = 0;
                r->text.data[r->text.len++] = (char)c;
                p++;
                continue;
            }
            cp = c;
            n = 1;
        } else {
            n = utf8_decode(p, end, &cp);
            if (n == 0 || refused(cp)) return -1;
        }
        if (text_char(r, run, cp) < 0) return -2;
        p += n;
    }
    r->p = p;
    return 0;
}

/* Outside cells and captions only ASCII white space may stand between tags: other text is
 * moved out of the table by the parser (§13.2.6.4.10 "in table text", foster parenting). */
static int skip_table_space(Reader *r) {
    while (r->p < r->end && is_html_space(*r->p)) r->p++;
    return (r->p < r->end && *r->p != '<') ? -1 : 0;
}

/* ------------------------------------------------------------------------------------------ */
/* Reading one table into cells, rows and row groups                                          */

typedef struct {
    CellVec cells;
    RowVec rows;
    GroupVec groups;
    int colgroup_width;
    int has_caption;
    Py_ssize_t caption_start, caption_len;
} Table;

enum { IN_TABLE, IN_COLGROUP, IN_GROUP, IN_ROW, IN_CELL, IN_CAPTION };

static int read_cells(Reader *r, Table *tb) {
    int mode = IN_TABLE, seen_rows = 0, colgroup_cols = 0, colgroup_span = 1;
    int colgroup_counts = 0;
    char group_kind = 0, cell_kind = 0;
    char inline_stack[MAX_INLINE_DEPTH][16];
    Py_ssize_t inline_len[MAX_INLINE_DEPTH];
    int depth = 0, a_open = 0;
    TextRun run = {0, 0};
    CellRec cell;
    Tag t;
    memset(&cell, 0, sizeof cell);
    for (;;) {
        if (mode == IN_CELL || mode == IN_CAPTION) {
            int status = read_text(r, &run);
            if (status < 0) return status;
        } else if (skip_table_space(r) < 0) {
            return -1;
        }
        if (r->p >= r->end) return -1; /* the page ends inside the table */
        const unsigned char *next = r->p + 1;
        if (next >= r->end) return -1;
        int letter = (*next >= 'a' && *next <= 'z') || (*next >= 'A' && *next <= 'Z');
        int end_letter = *next == '/' && next + 1 < r->end &&
                         ((next[1] >= 'a' && next[1] <= 'z') || (next[1] >= 'A' && next[1] <= 'Z'));
        if (!letter && !end_letter) {
            /* "<" not starting a tag is text in a cell (§13.2.5.6); a comment, doctype or
             * processing instruction is not read here. */
            if ((mode == IN_CELL || mode == IN_CAPTION) && *next != '!' && *next != '/' &&
                *next != '?') {
                if (text_char(r, &run, '<') < 0) return -2;
                r->p++;
                continue;
            }
            return -1;
        }
        const unsigned char *tag_start = r->p;
        int status = read_tag(r, &t, NULL);
        if (status < 0) return status;
        if (r->drop_hidden && t.has_hidden_or_style) return -1;
        if (t.end && t.id == T_TABLE) r->close = tag_start;
        int id = t.id;

        if (mode == IN_CELL || mode == IN_CAPTION) {
            if (id == T_BR && !t.end) { run.pending_space = 1; continue; } /* br reads as a space */
            if (id == T_VOID_INLINE && !t.end) continue;
            if (id == T_A || id == T_INLINE) {
                if (!t.end) {
                    if (depth == MAX_INLINE_DEPTH) return -1;
                    if (id == T_A) {
                        if (a_open) return -1; /* an a inside an a: the adoption agency runs */
                        a_open = 1;
                        if (t.has_href && mode == IN_CELL && cell.href_start < 0) {
                            /* The first link of the cell (cells.link_of: a[href]). */
                            if (bytes_reserve(&r->links, t.href_len) < 0) return -2;
                            cell.href_start = (int32_t)r->links.len;
                            cell.href_len = (uint32_t)t.href_len;
                            if (t.href_len) /* an empty href has no bytes to copy */
                                memcpy(r->links.data + r->links.len, r->attrs.data + t.href_start,
                                       (size_t)t.href_len);
                            r->links.len += t.href_len;
                        }
                    }
                    memcpy(inline_stack[depth], t.name, (size_t)t.name_len);
                    inline_len[depth++] = t.name_len;
                    continue;
                }
                if (depth == 0 || inline_len[depth - 1] != t.name_len ||
                    memcmp(inline_stack[depth - 1], t.name, (size_t)t.name_len) != 0)
                    return -1; /* misnested or stray: the parser's repairs are not followed */
                depth--;
                if (id == T_A) a_open = 0;
                continue;
            }
            if (mode == IN_CAPTION) {
                if (t.end && id == T_CAPTION) {
                    if (!tb->has_caption) {
                        tb->has_caption = 1;
                        tb->caption_start = run.start;
                        tb->caption_len = r->text.len - run.start;
                    } else {
                        r->text.len = run.start; /* only the first caption is the caption */
                    }
                    mode = IN_TABLE;
                    depth = 0;
                    a_open = 0;
                    continue;
                }
                return -1;
            }
            /* In a cell: tags that close it (§13.2.6.4.15). */
            int closes = 0;
            if (!t.end && (id == T_TD || id == T_TH || id == T_TR || id == T_TBODY ||
                           id == T_THEAD || id == T_TFOOT))
                closes = 1;
            else if (t.end && ((id == T_TD && cell_kind == 'd') || (id == T_TH && cell_kind == 'h')))
                closes = 2; /* the cell's own end tag: consumed */
            else if (t.end && (id == T_TR || id == T_TABLE))
                closes = 1;
            else if (t.end && (id == T_TBODY || id == T_THEAD || id == T_TFOOT)) {
                char kind = id == T_TBODY ? 'b' : id == T_THEAD ? 'h' : 'f';
                if (kind != group_kind) return -1; /* ignored by the parser: not followed */
                closes = 1;
            } else
                return -1;
            /* Close the cell. */
            cell.text_start = (uint32_t)run.start;
            cell.text_len = (uint32_t)(r->text.len - run.start);
            if (r->check_only) {
                r->text.len = 0;
                r->links.len = 0;
            } else {
                VEC_PUSH(tb->cells, cell, memory);
                tb->rows.items[tb->rows.len - 1].n_cells++;
            }
            mode = IN_ROW;
            depth = 0;
            a_open = 0;
            if (closes == 2) continue;
            /* The closing tag is handled again in row mode, below. */
        }

        if (t.end) {
            if (id == T_TABLE) {
                if (mode == IN_COLGROUP && !seen_rows)
                    tb->colgroup_width += colgroup_cols ? colgroup_counts : colgroup_span;
                return 0;
            }
            if (mode == IN_COLGROUP && id == T_COLGROUP) {
                if (!seen_rows) tb->colgroup_width += colgroup_cols ? colgroup_counts : colgroup_span;
                mode = IN_TABLE;
                continue;
            }
            if (mode == IN_ROW && id == T_TR) { mode = IN_GROUP; continue; }
            if ((mode == IN_ROW || mode == IN_GROUP) &&
                (id == T_TBODY || id == T_THEAD || id == T_TFOOT)) {
                char kind = id == T_TBODY ? 'b' : id == T_THEAD ? 'h' : 'f';
                if (kind != group_kind) return -1;
                mode = IN_TABLE;
                continue;
            }
            return -1; /* any other end tag is a parse error the reader does not follow */
        }

        /* Start tags outside cells. */
        if (mode == IN_COLGROUP) {
            if (id == T_COL) {
                colgroup_cols = 1;
                colgroup_counts += parse_span(r->attrs.data + t.span_start, t.span_len, t.has_span,
                                              1, 1, MAX_COLGROUP_SPAN);
                continue;
            }
            /* Anything else ends the column group (§13.2.6.4.12) and is handled in the table. */
            if (!seen_rows) tb->colgroup_width += colgroup_cols ? colgroup_counts : colgroup_span;
            mode = IN_TABLE;
        }
        if (id == T_CAPTION && mode == IN_TABLE) {
            mode = IN_CAPTION;
            run.start = r->text.len;
            run.pending_space = 0;
            continue;
        }
        if ((id == T_COLGROUP || id == T_COL) && mode == IN_TABLE) {
            mode = IN_COLGROUP;
            colgroup_cols = 0;
            colgroup_counts = 0;
            colgroup_span = 1;
            if (id == T_COLGROUP) {
                colgroup_span = parse_span(r->attrs.data + t.span_start, t.span_len, t.has_span, 1,
                                           1, MAX_COLGROUP_SPAN);
            } else { /* a col directly in the table opens a column group (§13.2.6.4.9) */
                colgroup_cols = 1;
                colgroup_counts = parse_span(r->attrs.data + t.span_start, t.span_len, t.has_span,
                                             1, 1, MAX_COLGROUP_SPAN);
            }
            continue;
        }
        if (id == T_THEAD || id == T_TBODY || id == T_TFOOT) {
            if (mode != IN_ROW && mode != IN_GROUP && mode != IN_TABLE) return -1;
            group_kind = id == T_TBODY ? 'b' : id == T_THEAD ? 'h' : 'f';
            GroupRec group = {group_kind, tb->rows.len};
            VEC_PUSH(tb->groups, group, memory);
            seen_rows = 1;
            mode = IN_GROUP;
            continue;
        }
        if (id == T_TR || id == T_TD || id == T_TH) {
            if (mode == IN_TABLE) { /* rows directly in the table get a tbody (§13.2.6.4.9) */
                group_kind = 'b';
                GroupRec group = {'b', tb->rows.len};
                VEC_PUSH(tb->groups, group, memory);
                seen_rows = 1;
                mode = IN_GROUP;
            } else if (mode != IN_GROUP && mode != IN_ROW) {
                return -1;
            }
            if (id == T_TR || mode == IN_GROUP) { /* a cell outside a row gets one (§13.2.6.4.13) */
                RowRec row = {tb->cells.len, 0};
                if (r->check_only) tb->rows.len = 0; /* counted by nobody: keep one slot */
                VEC_PUSH(tb->rows, row, memory);
                mode = IN_ROW;
                if (id == T_TR) continue;
            }
            /* A cell opens. */
            cell_kind = id == T_TH ? 'h' : 'd';
            memset(&cell, 0, sizeof cell);
            cell.href_start = -1;
            cell.header = id == T_TH;
            cell.colspan = (uint16_t)parse_span(r->attrs.data + t.colspan_start, t.colspan_len,
                                                t.has_colspan, 1, 1, MAX_COLSPAN);
            cell.rowspan = (uint16_t)parse_span(r->attrs.data + t.rowspan_start, t.rowspan_len,
                                                t.has_rowspan, 1, 0, MAX_ROWSPAN);
            mode = IN_CELL;
            run.start = r->text.len;
            run.pending_space = 0;
            continue;
        }
        return -1; /* any other start tag outside a cell */
    }
memory:
    return -2;
}

/* ------------------------------------------------------------------------------------------ */
/* Forming the grid (§4.9.12.1, as grid.py does it, rowspans cut at their row group's end)    */

typedef struct {
    int32_t *slots; /* the cell covering each slot, -1 for none */
    Py_ssize_t len, cap;
} SlotRow;

typedef struct { /* a cell placed wider or taller than one slot */
    int32_t x, y, width, height;
    PyObject *text, *link, *anchor; /* made once for all its slots (grid_result) */
} Span;
typedef VEC(Span) SpanVec;

typedef struct {
    SlotRow *rows;
    Py_ssize_t n_rows, width, overlaps, max_slots;
    int32_t *span_of; /* per cell: its index in spans, or -1 for a cell of one slot */
    SpanVec spans;
} Placement;

static int row_extend(SlotRow *row, Py_ssize_t len) {
    if (len <= row->len) return 0;
    if (len > row->cap) {
        Py_ssize_t cap = row->cap ? row->cap : 8;
        while (cap < len) cap *= 2;
        int32_t *slots = PyMem_Realloc(row->slots, (size_t)cap * sizeof *slots);
        if (!slots) return -2;
        row->slots = slots;
        row->cap = cap;
    }
    for (Py_ssize_t i = row->len; i < len; i++) row->slots[i] = -1;
    row->len = len;
    return 0;
}

/* -1 when a grid `width` columns wide would pass the slot budget (the DOM path says so). */
static int budget(Placement *pl, Py_ssize_t width) {
    return (double)width * (double)pl->n_rows > (double)pl->max_slots ? -1 : 0;
}

static int claim(Placement *pl, Py_ssize_t cell, Py_ssize_t x, Py_ssize_t width, Py_ssize_t y) {
    SlotRow *row = &pl->rows[y];
    if (row_extend(row, x + width) < 0) return -2;
    for (Py_ssize_t sx = x; sx < x + width; sx++) {
        if (row->slots[sx] >= 0) pl->overlaps++; /* the cell placed first keeps the slot */
        else row->slots[sx] = (int32_t)cell;
    }
    return 0;
}

static int place(Table *tb, Placement *pl) {
    Py_ssize_t y = 0;
    Py_ssize_t *growing = PyMem_Malloc(sizeof(Py_ssize_t) * (size_t)(tb->cells.len + 1));
    if (!growing) return -2;
    int status = 0;
    if (tb->colgroup_width && budget(pl, tb->colgroup_width) < 0) { status = -1; goto done; }
    pl->width = tb->colgroup_width;
    for (int pass = 0; pass < 2; pass++) { /* every tfoot last (§4.9.12.1) */
        for (Py_ssize_t g = 0; g < tb->groups.len; g++) {
            GroupRec *group = &tb->groups.items[g];
            if ((group->kind == 'f') != (pass == 1)) continue;
            Py_ssize_t last = g + 1 < tb->groups.len ? tb->groups.items[g + 1].first_row
                                                     : tb->rows.len;
            Py_ssize_t group_end = y + (last - group->first_row), n_growing = 0;
            for (Py_ssize_t r = group->first_row; r < last; r++, y++) {
                for (Py_ssize_t i = 0; i < n_growing; i++) {
                    Py_ssize_t c = growing[i];
                    Span *span = &pl->spans.items[pl->span_of[c]];
                    if ((status = claim(pl, c, span->x, span->width, y)) < 0) goto done;
                }
                SlotRow *row = &pl->rows[y];
                RowRec *rec = &tb->rows.items[r];
                Py_ssize_t x = 0;
                for (Py_ssize_t c = rec->first_cell; c < rec->first_cell + rec->n_cells; c++) {
                    CellRec *cell = &tb->cells.items[c];
                    while (x < row->len && row->slots[x] >= 0) x++;
                    Py_ssize_t width = cell->colspan;
                    int grows = cell->rowspan == 0;
                    Py_ssize_t height = grows ? group_end - y
                                              : (cell->rowspan < group_end - y ? cell->rowspan
                                                                               : group_end - y);
                    if (width == 1 && height == 1) {
                        if (x == row->len) {
                            if ((status = row_extend(row, x + 1)) < 0) goto done;
                        }
                        row->slots[x] = (int32_t)c;
                        x++;
                        if (x > pl->width) {
                            if ((status = budget(pl, x)) < 0) goto done;
                            pl->width = x;
                        }
                        continue;
                    }
                    if (x + width > pl->width && (status = budget(pl, x + width)) < 0) goto done;
                    Span span = {(int32_t)x, (int32_t)y, (int32_t)width, (int32_t)height,
                                 NULL, NULL, NULL};
                    pl->span_of[c] = (int32_t)pl->spans.len;
                    VEC_PUSH(pl->spans, span, memory);
                    Py_ssize_t rows_now = grows ? 1 : height;
                    for (Py_ssize_t ry = y; ry < y + rows_now; ry++)
                        if ((status = claim(pl, c, x, width, ry)) < 0) goto done;
                    if (grows && height > 1) growing[n_growing++] = c;
                    x += width;
                    if (x > pl->width) pl->width = x;
                }
            }
        }
    }
done:
    PyMem_Free(growing);
    return status;
memory:
    PyMem_Free(growing);
    return -2;
}

/* ------------------------------------------------------------------------------------------ */
/* The Python result                                                                           */

static PyObject *pair(Py_ssize_t a, Py_ssize_t b) { return Py_BuildValue("(nn)", a, b); }

static int set_pair_item(PyObject *dict, Py_ssize_t x, Py_ssize_t y, PyObject *value) {
    PyObject *key = pair(x, y);
    if (!key) return -1;
    int status = PyDict_SetItem(dict, key, value);
    Py_DECREF(key);
    return status;
}

/* Short texts repeat a great deal in statistics ("0", "12", "—"): one string object for each
 * distinct short text keeps the grid's memory near the page's, not one object per slot. */
#define SHARED_SLOTS 65536 /* a power of two; filled to half at most */
#define SHARED_MAX_LEN 16
typedef struct {
    struct { const char *text; uint32_t len; PyObject *value; } slots[SHARED_SLOTS];
    Py_ssize_t used;
} Shared;

static PyObject *shared_text(Shared *shared, const char *text, uint32_t len) {
    if (len == 0) return PyUnicode_FromStringAndSize("", 0); /* the buffer may be unallocated */
    if (len > SHARED_MAX_LEN) return PyUnicode_DecodeUTF8(text, len, "strict");
    uint32_t hash = 2166136261u; /* FNV-1a */
    for (uint32_t i = 0; i < len; i++) hash = (hash ^ (unsigned char)text[i]) * 16777619u;
    for (uint32_t i = hash & (SHARED_SLOTS - 1);; i = (i + 1) & (SHARED_SLOTS - 1)) {
        if (!shared->slots[i].value) {
            PyObject *value = PyUnicode_DecodeUTF8(text, len, "strict");
            if (value && shared->used < SHARED_SLOTS / 2) {
                shared->slots[i].text = text;
                shared->slots[i].len = len;
                shared->slots[i].value = value; /* borrowed: each cell holds its own reference */
                shared->used++;
            }
            return value;
        }
        if (shared->slots[i].len == len && memcmp(shared->slots[i].text, text, len) == 0)
            return Py_NewRef(shared->slots[i].value);
    }
}

/* The text, link and anchor of the cell covering a slot: new references (link, anchor NULL
 * when the cell has none or is a one-slot cell); a spanning cell's are made once. */
static int slot_values(Reader *r, Table *tb, Placement *pl, Shared *shared, Py_ssize_t c,
                       PyObject **text, PyObject **link, PyObject **anchor) {
    CellRec *cell = &tb->cells.items[c];
    Span *span = pl->span_of[c] >= 0 ? &pl->spans.items[pl->span_of[c]] : NULL;
    *text = *link = *anchor = NULL;
    if (span && span->text) {
        *text = Py_NewRef(span->text);
        *link = Py_XNewRef(span->link);
        *anchor = Py_NewRef(span->anchor);
        return 0;
    }
    *text = shared_text(shared, r->text.data + cell->text_start, cell->text_len);
    if (!*text) return -1;
    if (cell->href_start >= 0) {
        *link = cell->href_len ? PyUnicode_DecodeUTF8(r->links.data + cell->href_start,
                                                      cell->href_len, "strict")
                               : PyUnicode_FromStringAndSize("", 0);
        if (!*link) {
            Py_CLEAR(*text);
            return -1;
        }
    }
    if (span) {
        if (!(*anchor = pair(span->x, span->y))) {
            Py_CLEAR(*text);
            Py_CLEAR(*link);
            return -1;
        }
        span->text = Py_NewRef(*text);
        span->link = Py_XNewRef(*link);
        span->anchor = Py_NewRef(*anchor);
    }
    return 0;
}

static PyObject *grid_result(Reader *r, Table *tb, Placement *pl, PyObject *attributes) {
    PyObject *texts = NULL, *groups = NULL, *headers = NULL, *covered = NULL, *owners = NULL;
    PyObject *spans = NULL, *links = NULL, *caption = NULL, *empty = NULL, *result = NULL;
    Shared *shared = NULL;
    Py_ssize_t width = pl->width;
    static PyObject *kinds[3];
    if (!kinds[0]) {
        kinds[0] = PyUnicode_InternFromString("thead");
        kinds[1] = PyUnicode_InternFromString("tbody");
        kinds[2] = PyUnicode_InternFromString("tfoot");
        if (!kinds[0] || !kinds[1] || !kinds[2]) return NULL;
    }
    shared = PyMem_Calloc(1, sizeof(Shared));
    if (!shared) { PyErr_NoMemory(); goto fail; }
    empty = PyUnicode_FromStringAndSize("", 0);
    texts = PyList_New(pl->n_rows);
    groups = PyList_New(pl->n_rows);
    headers = PyList_New(pl->n_rows);
    covered = PyList_New(pl->n_rows);
    owners = PyDict_New();
    spans = PyDict_New();
    links = PyDict_New();
    if (!empty || !texts || !groups || !headers || !covered || !owners || !spans || !links)
        goto fail;
    Py_ssize_t y = 0;
    for (int pass = 0; pass < 2; pass++) {
        for (Py_ssize_t g = 0; g < tb->groups.len; g++) {
            GroupRec *group = &tb->groups.items[g];
            if ((group->kind == 'f') != (pass == 1)) continue;
            Py_ssize_t last = g + 1 < tb->groups.len ? tb->groups.items[g + 1].first_row
                                                     : tb->rows.len;
            PyObject *kind = kinds[group->kind == 'h' ? 0 : group->kind == 'b' ? 1 : 2];
            for (Py_ssize_t r2 = group->first_row; r2 < last; r2++, y++)
                PyList_SET_ITEM(groups, y, Py_NewRef(kind));
        }
    }
    for (y = 0; y < pl->n_rows; y++) {
        SlotRow *row = &pl->rows[y];
        PyObject *line = PyList_New(width);
        if (!line) goto fail;
        PyList_SET_ITEM(texts, y, line);
        Py_ssize_t prefix = 0, any_header = 0, gap = 0;
        for (Py_ssize_t x = 0; x < width; x++) {
            Py_ssize_t c = x < row->len ? row->slots[x] : -1;
            if (c < 0) {
                PyList_SET_ITEM(line, x, Py_NewRef(empty));
                gap = 1;
                continue;
            }
            PyObject *text, *link, *anchor;
            if (slot_values(r, tb, pl, shared, c, &text, &link, &anchor) < 0) goto fail;
            PyList_SET_ITEM(line, x, text);
            int failed = (link && set_pair_item(links, x, y, link) < 0) ||
                         (anchor && set_pair_item(owners, x, y, anchor) < 0);
            Py_XDECREF(link);
            Py_XDECREF(anchor);
            if (failed) goto fail;
            if (!gap) prefix = x + 1;
            else gap = 2; /* a covered slot after an empty one */
            if (tb->cells.items[c].header) any_header = 1;
        }
        PyObject *flags = Py_None;
        if (any_header) {
            flags = PyList_New(width);
            if (!flags) goto fail;
            for (Py_ssize_t x = 0; x < width; x++) {
                Py_ssize_t c = x < row->len ? row->slots[x] : -1;
                int header = c >= 0 && tb->cells.items[c].header;
                PyList_SET_ITEM(flags, x, Py_NewRef(header ? Py_True : Py_False));
            }
        } else {
            Py_INCREF(flags);
        }
        PyList_SET_ITEM(headers, y, flags);
        PyObject *cover;
        if (gap == 2) {
            cover = PyList_New(width);
            if (!cover) goto fail;
            for (Py_ssize_t x = 0; x < width; x++) {
                int on = x < row->len && row->slots[x] >= 0;
                PyList_SET_ITEM(cover, x, Py_NewRef(on ? Py_True : Py_False));
            }
        } else {
            cover = PyLong_FromSsize_t(prefix);
            if (!cover) goto fail;
        }
        PyList_SET_ITEM(covered, y, cover);
    }
    for (Py_ssize_t i = 0; i < pl->spans.len; i++) {
        Span *span = &pl->spans.items[i];
        if (!span->anchor) continue; /* every slot it would cover was taken by another cell */
        PyObject *size = pair(span->width, span->height);
        if (!size || PyDict_SetItem(spans, span->anchor, size) < 0) {
            Py_XDECREF(size);
            goto fail;
        }
        Py_DECREF(size);
    }
    if (tb->has_caption) {
        caption = tb->caption_len ? PyUnicode_DecodeUTF8(r->text.data + tb->caption_start,
                                                         tb->caption_len, "strict")
                                  : PyUnicode_FromStringAndSize("", 0);
        if (!caption) goto fail;
    } else {
        caption = Py_NewRef(Py_None);
    }
    result = Py_BuildValue("(OOnOOOOOOnO)", attributes, caption, width, groups, texts, headers,
                           covered, owners, spans, pl->overlaps, links);
fail:
    for (Py_ssize_t i = 0; i < pl->spans.len; i++) {
        Py_CLEAR(pl->spans.items[i].text);
        Py_CLEAR(pl->spans.items[i].link);
        Py_CLEAR(pl->spans.items[i].anchor);
    }
    PyMem_Free(shared);
    Py_XDECREF(empty);
    Py_XDECREF(texts);
    Py_XDECREF(groups);
    Py_XDECREF(headers);
    Py_XDECREF(covered);
    Py_XDECREF(owners);
    Py_XDECREF(spans);
    Py_XDECREF(links);
    Py_XDECREF(caption);
    return result;
}

static PyObject *read_table(PyObject *self, PyObject *args) {
    Py_buffer view;
    Py_ssize_t offset, max_slots;
    int drop_hidden;
    if (!PyArg_ParseTuple(args, "y*nnp", &view, &offset, &max_slots, &drop_hidden)) return NULL;
    Reader r;
    Table tb;
    Placement pl;
    memset(&r, 0, sizeof r);
    memset(&tb, 0, sizeof tb);
    memset(&pl, 0, sizeof pl);
    PyObject *result = NULL, *attributes = NULL;
    r.start = view.buf;
    r.end = r.start + view.len;
    r.drop_hidden = drop_hidden;
    int status = -1;
    if (offset < 0 || offset + 6 > view.len || r.start[offset] != '<') goto not_plain;
    if (view.len > 0x7FFFFFFF) goto not_plain; /* the cell records count in 32 bits */
    r.p = r.start + offset;
    Tag t;
    attributes = PyDict_New();
    if (!attributes) goto error;
    status = read_tag(&r, &t, attributes);
    if (status == -2) goto memory;
    if (status < 0 || t.id != T_TABLE || t.end) goto not_plain;
    status = read_cells(&r, &tb);
    if (status == -2) goto memory;
    if (status < 0) goto not_plain;
    pl.n_rows = tb.rows.len;
    pl.max_slots = max_slots;
    pl.rows = PyMem_Calloc((size_t)pl.n_rows + 1, sizeof(SlotRow));
    pl.span_of = PyMem_Malloc(sizeof(int32_t) * ((size_t)tb.cells.len + 1));
    if (!pl.rows || !pl.span_of) goto memory;
    for (Py_ssize_t c = 0; c < tb.cells.len; c++) pl.span_of[c] = -1;
    status = place(&tb, &pl);
    if (status == -2) goto memory;
    if (status < 0) {
        result = PyLong_FromLong(-1); /* over the slot budget */
        goto error;
    }
    result = grid_result(&r, &tb, &pl, attributes);
    goto error;
not_plain:
    result = Py_None;
    Py_INCREF(result);
    goto error;
memory:
    PyErr_NoMemory();
error:
    if (pl.rows)
        for (Py_ssize_t y = 0; y < pl.n_rows; y++) PyMem_Free(pl.rows[y].slots);
    PyMem_Free(pl.rows);
    PyMem_Free(pl.span_of);
    PyMem_Free(pl.spans.items);
    PyMem_Free(tb.cells.items);
    PyMem_Free(tb.rows.items);
    PyMem_Free(tb.groups.items);
    PyMem_Free(r.text.data);
    PyMem_Free(r.links.data);
    PyMem_Free(r.attrs.data);
    Py_XDECREF(attributes);
    PyBuffer_Release(&view);
    return result;
}

/* Whether the table whose start tag is at `offset` is plain, without reading its grid: where its
 * content starts, where its end tag starts and where that ends; None if it is not plain. */
static PyObject *plain_extent(PyObject *self, PyObject *args) {
    Py_buffer view;
    Py_ssize_t offset;
    if (!PyArg_ParseTuple(args, "y*n", &view, &offset)) return NULL;
    Reader r;
    Table tb;
    memset(&r, 0, sizeof r);
    memset(&tb, 0, sizeof tb);
    r.start = view.buf;
    r.end = r.start + view.len;
    r.check_only = 1;
    PyObject *result = NULL;
    int status = -1;
    Tag t;
    if (offset >= 0 && offset + 6 <= view.len && r.start[offset] == '<') {
        r.p = r.start + offset;
        status = read_tag(&r, &t, NULL);
        if (status == 0 && (t.id != T_TABLE || t.end)) status = -1;
    }
    Py_ssize_t content = r.p - r.start;
    if (status == 0) status = read_cells(&r, &tb);
    if (status == -2) PyErr_NoMemory();
    else if (status < 0 || !r.close) result = Py_NewRef(Py_None);
    else result = Py_BuildValue("(nnn)", content, r.close - r.start, r.p - r.start);
    PyMem_Free(tb.cells.items);
    PyMem_Free(tb.rows.items);
    PyMem_Free(tb.groups.items);
    PyMem_Free(r.text.data);
    PyMem_Free(r.links.data);
    PyMem_Free(r.attrs.data);
    PyBuffer_Release(&view);
    return result;
}

/* ------------------------------------------------------------------------------------------ */
/* Finding the tables of a page                                                                */

static int lower_eq(const unsigned char *p, const unsigned char *end, const char *word) {
    size_t n = strlen(word);
    if ((size_t)(end - p) < n) return 0;
    for (size_t i = 0; i < n; i++) {
        unsigned char c = p[i];
        if (c >= 'A' && c <= 'Z') c += 32;
        if (c != (unsigned char)word[i]) return 0;
    }
    return 1;
}

/* Past the end tag "</name" (then white space, "/" or ">") that ends raw text; NULL if none. */
static const unsigned char *raw_text_end(const unsigned char *p, const unsigned char *end,
                                         const char *name) {
    size_t n = strlen(name);
    while ((p = memchr(p, '<', (size_t)(end - p))) != NULL) {
        if (p + 2 + n < end && p[1] == '/' && lower_eq(p + 2, end, name)) {
            unsigned char c = p[2 + n];
            if (is_html_space(c) || c == '/' || c == '>') return p;
        }
        p++;
    }
    return NULL;
}

/* Past a tag's attributes, quotes respected, to just after its ">"; NULL at the page's end. */
static const unsigned char *tag_end(const unsigned char *p, const unsigned char *end) {
    while (p < end) {
        unsigned char c = *p;
        if (c == '>') return p + 1;
        if (c == '=') {
            p++;
            while (p < end && is_html_space(*p)) p++;
            if (p < end && (*p == '"' || *p == '\'')) {
                const unsigned char *close = memchr(p + 1, *p, (size_t)(end - p - 1));
                if (!close) return NULL;
                p = close + 1;
            }
            continue;
        }
        p++;
    }
    return NULL;
}

static PyObject *scan_tables(PyObject *self, PyObject *args) {
    Py_buffer view;
    int noscript_raw;
    if (!PyArg_ParseTuple(args, "y*p", &view, &noscript_raw)) return NULL;
    const unsigned char *start = view.buf, *end = start + view.len, *p = start;
    PyObject *found = PyList_New(0), *outermost = PyList_New(0);
    int foreign = 0, in_select = 0, unsure = 0;
    Py_ssize_t depth = 0; /* tables open, by start and end tags (a stray end tag never below 0) */
    if (!found || !outermost) goto fail;
    while (!unsure && (p = memchr(p, '<', (size_t)(end - p))) != NULL) {
        const unsigned char *q = p + 1;
        if (q >= end) break;
        if (*q == '!') {
            if (q + 2 < end && q[1] == '-' && q[2] == '-') { /* a comment (§13.2.5.43) */
                const unsigned char *c = q + 3;
                if (c < end && *c == '>') { p = c + 1; continue; }
                if (c + 1 < end && c[0] == '-' && c[1] == '>') { p = c + 2; continue; }
                for (; c + 2 < end; c++) {
                    if (c[0] == '-' && c[1] == '-' &&
                        (c[2] == '>' || (c[2] == '!' && c + 3 < end && c[3] == '>')))
                        break;
                }
                if (c + 2 >= end) break; /* the rest of the page is a comment */
                p = c + (c[2] == '>' ? 3 : 4);
                continue;
            }
            if (foreign && lower_eq(q + 1, end, "[cdata[")) { unsure = 1; break; }
            const unsigned char *close = memchr(q, '>', (size_t)(end - q)); /* doctype, bogus */
            if (!close) break;
            p = close + 1;
            continue;
        }
        if (*q == '?') {
            const unsigned char *close = memchr(q, '>', (size_t)(end - q));
            if (!close) break;
            p = close + 1;
            continue;
        }
        int closing = *q == '/';
        const unsigned char *name = closing ? q + 1 : q;
        if (name >= end || !((*name >= 'a' && *name <= 'z') || (*name >= 'A' && *name <= 'Z'))) {
            if (closing) { /* "</" then no letter: a bogus comment, or nothing for "</>" */
                const unsigned char *close = memchr(q, '>', (size_t)(end - q));
                if (!close) break;
                p = close + 1;
            } else {
                p = q; /* "<" as text */
            }
            continue;
        }
        const unsigned char *name_end = name;
        while (name_end < end && !is_html_space(*name_end) && *name_end != '/' &&
               *name_end != '>')
            name_end++;
        char tag[16];
        size_t len = (size_t)(name_end - name);
        if (len < sizeof tag) {
            for (size_t i = 0; i < len; i++)
                tag[i] = (char)((name[i] >= 'A' && name[i] <= 'Z') ? name[i] + 32 : name[i]);
        } else {
            len = 0;
        }
        tag[len] = 0;
        const unsigned char *after = tag_end(name_end, end);
        if (!after) break;
        int self_closing = after - 2 >= name_end && after[-2] == '/';
        if (closing) {
            if (!strcmp(tag, "table") && depth > 0) depth--;
            if (foreign && (!strcmp(tag, "svg") || !strcmp(tag, "math"))) foreign--;
            if (!strcmp(tag, "select")) in_select = 0;
            p = after;
            continue;
        }
        if (!strcmp(tag, "table")) {
            if (foreign || in_select) { unsure = 1; break; }
            PyObject *offset = PyLong_FromSsize_t(p - start);
            if (!offset || PyList_Append(found, offset) < 0 ||
                PyList_Append(outermost, depth == 0 ? Py_True : Py_False) < 0) {
                Py_XDECREF(offset);
                goto fail;
            }
            Py_DECREF(offset);
            depth++;
            p = after;
            continue;
        }
        if (!strcmp(tag, "svg") || !strcmp(tag, "math")) {
            if (!self_closing) foreign++;
            p = after;
            continue;
        }
        if (!strcmp(tag, "select")) in_select = 1;
        if (!strcmp(tag, "plaintext") || !strcmp(tag, "template") ||
            (foreign && (!strcmp(tag, "foreignobject") || !strcmp(tag, "desc") ||
                         !strcmp(tag, "title") || !strcmp(tag, "annotation-xml") ||
                         !strcmp(tag, "script") || !strcmp(tag, "style")))) {
            unsure = 1; /* the tokenizer's state there depends on the tree */
            break;
        }
        const char *raw = NULL;
        if (!strcmp(tag, "script") || !strcmp(tag, "style") || !strcmp(tag, "xmp") ||
            !strcmp(tag, "iframe") || !strcmp(tag, "noembed") || !strcmp(tag, "noframes") ||
            !strcmp(tag, "textarea") || !strcmp(tag, "title") ||
            (noscript_raw && !strcmp(tag, "noscript")))
            raw = tag; /* RAWTEXT, RCDATA and script data (§13.2.6.2) */
        p = after;
        if (raw) {
            const unsigned char *close = raw_text_end(p, end, raw);
            if (!strcmp(raw, "script")) {
                /* Script data with "<!--" has escaped states this scanner does not follow. */
                const unsigned char *stop = close ? close : end;
                for (const unsigned char *c = p; c + 3 < stop; c++)
                    if (c[0] == '<' && c[1] == '!' && c[2] == '-' && c[3] == '-') {
                        unsure = 1;
                        break;
                    }
            }
            if (!close) break;
            p = close;
        }
    }
    PyObject *result = unsure ? Py_NewRef(Py_None) : PyTuple_Pack(2, found, outermost);
    Py_DECREF(found);
    Py_DECREF(outermost);
    PyBuffer_Release(&view);
    return result;
fail:
    Py_XDECREF(found);
    Py_XDECREF(outermost);
    PyBuffer_Release(&view);
    return NULL;
}

static PyObject *space_code_points(PyObject *self, PyObject *unused) {
    size_t n = sizeof SPACES / sizeof SPACES[0];
    PyObject *points = PyTuple_New((Py_ssize_t)n);
    if (!points) return NULL;
    for (size_t i = 0; i < n; i++) {
        PyObject *value = PyLong_FromUnsignedLong(SPACES[i]);
        if (!value) { Py_DECREF(points); return NULL; }
        PyTuple_SET_ITEM(points, (Py_ssize_t)i, value);
    }
    return points;
}

static PyMethodDef methods[] = {
    {"scan_tables", scan_tables, METH_VARARGS,
     "scan_tables(data, noscript_raw) -> (offsets, outermost flags) of the tables, or None"},
    {"read_table", read_table, METH_VARARGS,
     "read_table(data, offset, max_slots, drop_hidden) -> grid tuple, None or -1"},
    {"plain_extent", plain_extent, METH_VARARGS,
     "plain_extent(data, offset) -> (content, close, end) of a plain table, or None"},
    {"space_code_points", space_code_points, METH_NOARGS,
     "space_code_points() -> the code points collapsed as white space"},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {
    PyModuleDef_HEAD_INIT, "_plaintable", "The compiled reader of plain HTML tables.", -1, methods,
    NULL, NULL, NULL, NULL,
};

PyMODINIT_FUNC PyInit__plaintable(void) {
    PyObject *m = PyModule_Create(&module);
    if (!m) return NULL;
    PyObject *names = Py_BuildValue("(ssss)", "plain_extent", "read_table", "scan_tables",
                                    "space_code_points");
    if (!names || PyModule_AddObject(m, "__all__", names) < 0) {
        Py_XDECREF(names);
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
