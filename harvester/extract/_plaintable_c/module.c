/* The module harvester.extract._plaintable: its functions (see plaintable.h). */
#include "plaintable.h"

/* Free what reading a table allocated. */
static void release(Reader *r, Table *tb) {
    PyMem_Free(tb->cells.items);
    PyMem_Free(tb->rows.items);
    PyMem_Free(tb->groups.items);
    PyMem_Free(r->text.data);
    PyMem_Free(r->links.data);
    PyMem_Free(r->attrs.data);
}

/* Point `r` at the page and read the table start tag at `offset`: 0, -1 when there is no plain
 * table's start tag there (or the page is past what the cell records can count), -2 on memory
 * error. With `attributes`, the tag's attributes go into that dict. */
static int open_table(Reader *r, const Py_buffer *view, Py_ssize_t offset, PyObject *attributes) {
    r->start = view->buf;
    r->end = r->start + view->len;
    if (offset < 0 || offset + 6 > view->len || r->start[offset] != '<') return -1;
    if (view->len > 0x7FFFFFFF) return -1; /* the cell records count in 32 bits */
    r->p = r->start + offset;
    Tag t;
    int status = read_tag(r, &t, attributes);
    if (status == 0 && (t.id != T_TABLE || t.end)) return -1;
    return status;
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
    r.drop_hidden = drop_hidden;
    attributes = PyDict_New();
    if (!attributes) goto error;
    int status = open_table(&r, &view, offset, attributes);
    if (status == -2) goto memory;
    if (status < 0) goto not_plain;
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
    PyMem_Free(pl.overlaps.items);
    release(&r, &tb);
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
    r.check_only = 1;
    PyObject *result = NULL;
    int status = open_table(&r, &view, offset, NULL);
    Py_ssize_t content = status == 0 ? r.p - r.start : 0; /* just after the start tag */
    if (status == 0) status = read_cells(&r, &tb);
    if (status == -2) PyErr_NoMemory();
    else if (status < 0 || !r.close) result = Py_NewRef(Py_None);
    else result = Py_BuildValue("(nnn)", content, r.close - r.start, r.p - r.start);
    release(&r, &tb);
    PyBuffer_Release(&view);
    return result;
}

static PyObject *space_code_points(PyObject *self, PyObject *unused) {
    size_t n = SPACES_COUNT;
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
