/* The compiled reader of plain tables, harvester.extract._plaintable: what its parts share.
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
#ifndef HARVESTER_PLAINTABLE_H
#define HARVESTER_PLAINTABLE_H
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>
#include <string.h>

#define MAX_COLSPAN 1000
#define MAX_ROWSPAN 65534
#define MAX_COLGROUP_SPAN 1000
#define MAX_INLINE_DEPTH 32

typedef struct {
    char *data;
    Py_ssize_t len, cap;
} Bytes;

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

enum {
    T_OTHER, T_TABLE, T_CAPTION, T_COLGROUP, T_COL, T_THEAD, T_TBODY, T_TFOOT, T_TR, T_TD, T_TH,
    T_BR, T_VOID_INLINE, T_A, T_INLINE,
};

typedef struct {
    int pending_space; /* white space seen since the last character written */
    Py_ssize_t start;  /* where this text starts in r->text */
} TextRun;

typedef struct {
    CellVec cells;
    RowVec rows;
    GroupVec groups;
    int colgroup_width;
    int has_caption;
    Py_ssize_t caption_start, caption_len;
} Table;

enum { IN_TABLE, IN_COLGROUP, IN_GROUP, IN_ROW, IN_CELL, IN_CAPTION };

typedef struct {
    int32_t *slots; /* the cell covering each slot, -1 for none */
    Py_ssize_t len, cap;
} SlotRow;

typedef struct { /* a cell placed wider or taller than one slot */
    int32_t x, y, width, height;
    PyObject *text, *link, *anchor; /* made once for all its slots (grid_result) */
} Span;
typedef VEC(Span) SpanVec;

typedef struct { /* a slot two cells claimed: the cell placed first keeps it */
    int32_t x, y;
} Overlap;
typedef VEC(Overlap) OverlapVec;

typedef struct {
    SlotRow *rows;
    Py_ssize_t n_rows, width, max_slots;
    OverlapVec overlaps; /* in the order the table model meets them, as grid.py lists them */
    int32_t *span_of; /* per cell: its index in spans, or -1 for a cell of one slot */
    SpanVec spans;
} Placement;

/* chars.c */
static inline int is_html_space(unsigned char c) { /* ASCII white space, HTML §2.3.1 (infra) */
    return c == ' ' || c == '\t' || c == '\n' || c == '\f' || c == '\r';
}

/* Characters the reader refuses in text: C0 and C1 controls other than white space (the parser
 * keeps most but reports them), NUL (dropped in cells), and noncharacters. */
static inline int refused(uint32_t c) {
    if (c < 0x20) return !(c == 0x09 || c == 0x0A || c == 0x0C || c == 0x0D);
    if (c >= 0x7F && c <= 0x9F) return 1;
    if (c >= 0xFDD0 && c <= 0xFDEF) return 1;
    if ((c & 0xFFFE) == 0xFFFE) return 1;
    return 0;
}

/* Decode one UTF-8 sequence at p (< end); returns its length, or 0 if it is not valid UTF-8. */
static inline int utf8_decode(const unsigned char *p, const unsigned char *end, uint32_t *out) {
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

static inline int utf8_encode(uint32_t c, char *out) {
    if (c < 0x80) { out[0] = (char)c; return 1; }
    if (c < 0x800) { out[0] = (char)(0xC0 | (c >> 6)); out[1] = (char)(0x80 | (c & 0x3F)); return 2; }
    if (c < 0x10000) {
        out[0] = (char)(0xE0 | (c >> 12)); out[1] = (char)(0x80 | ((c >> 6) & 0x3F));
        out[2] = (char)(0x80 | (c & 0x3F)); return 3;
    }
    out[0] = (char)(0xF0 | (c >> 18)); out[1] = (char)(0x80 | ((c >> 12) & 0x3F));
    out[2] = (char)(0x80 | ((c >> 6) & 0x3F)); out[3] = (char)(0x80 | (c & 0x3F)); return 4;
}

extern const uint32_t SPACES[];
extern const size_t SPACES_COUNT;

int bytes_reserve(Bytes *b, Py_ssize_t extra);
int is_space(uint32_t c);
Py_ssize_t char_ref(const unsigned char *p, const unsigned char *end, uint32_t *cp);
/* tokens.c */
int read_tag(Reader *r, Tag *t, PyObject *attributes);
int parse_span(const char *v, Py_ssize_t len, int present, int deflt, int minimum, int maximum);
int text_char(Reader *r, TextRun *run, uint32_t cp);
int read_text(Reader *r, TextRun *run);
int skip_table_space(Reader *r);
/* cells.c */
int read_cells(Reader *r, Table *tb);
/* grid.c */
int place(Table *tb, Placement *pl);
PyObject *grid_result(Reader *r, Table *tb, Placement *pl, PyObject *attributes);
/* scan.c */
PyObject *scan_tables(PyObject *self, PyObject *args);

#endif
