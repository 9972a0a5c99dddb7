/* Forming the grid of a table read into cells, and the Python objects it becomes. */
#include "plaintable.h"

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
        if (row->slots[sx] >= 0) { /* the cell placed first keeps the slot */
            Overlap overlap = {(int32_t)sx, (int32_t)y};
            VEC_PUSH(pl->overlaps, overlap, memory);
        } else {
            row->slots[sx] = (int32_t)cell;
        }
    }
    return 0;
memory:
    return -2;
}

int place(Table *tb, Placement *pl) {
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

PyObject *grid_result(Reader *r, Table *tb, Placement *pl, PyObject *attributes) {
    PyObject *texts = NULL, *groups = NULL, *headers = NULL, *covered = NULL, *owners = NULL;
    PyObject *spans = NULL, *links = NULL, *caption = NULL, *empty = NULL, *result = NULL;
    PyObject *overlaps = NULL;
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
    overlaps = PyList_New(pl->overlaps.len);
    if (!overlaps) goto fail;
    for (Py_ssize_t i = 0; i < pl->overlaps.len; i++) {
        PyObject *at = pair(pl->overlaps.items[i].x, pl->overlaps.items[i].y);
        if (!at) goto fail;
        PyList_SET_ITEM(overlaps, i, at);
    }
    result = Py_BuildValue("(OOnOOOOOOOO)", attributes, caption, width, groups, texts, headers,
                           covered, owners, spans, overlaps, links);
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
    Py_XDECREF(overlaps);
    Py_XDECREF(caption);
    return result;
}
