/* Reading one table into cells, rows and row groups, as the tree builder would. */
#include "plaintable.h"

int read_cells(Reader *r, Table *tb) {
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
