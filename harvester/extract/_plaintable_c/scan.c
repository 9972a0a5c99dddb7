/* Finding the tables of a page. */
#include "plaintable.h"

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

PyObject *scan_tables(PyObject *self, PyObject *args) {
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
