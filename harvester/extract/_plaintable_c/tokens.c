/* Tags, their attributes, and the text between them. */
#include "plaintable.h"

/* ------------------------------------------------------------------------------------------ */
/* Tags                                                                                        */

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
int read_tag(Reader *r, Tag *t, PyObject *attributes) {
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
int parse_span(const char *v, Py_ssize_t len, int present, int deflt, int minimum,
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

int text_char(Reader *r, TextRun *run, uint32_t cp) {
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
int read_text(Reader *r, TextRun *run) {
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
int skip_table_space(Reader *r) {
    while (r->p < r->end && is_html_space(*r->p)) r->p++;
    return (r->p < r->end && *r->p != '<') ? -1 : 0;
}
