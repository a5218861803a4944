/* The bench-results grid (id "results-table"): its solvent editor with the page's
   type-ahead list, its delete button, the marks of bad cells, paste from a spreadsheet
   and showing a new row. A static file: the page's content-security policy allows no
   code built from strings, so the grid only names these functions. */
(function () {
    'use strict';
    var GRID = 'results-table';
    // The marks of the table as the server last sent them (logic.table_marks): keyed by
    // the row's place in the data, so sorting or filtering never moves a mark.
    var marks = {};
    // A row added while the grid's screen was hidden, to show when it is shown again.
    var pendingRow = null;

    function rowMarks(params) {
        var node = params && params.node;
        if (!node || node.sourceRowIndex === undefined || node.sourceRowIndex === null) {
            return null;
        }
        return marks[String(node.sourceRowIndex)] || null;
    }

    function field(params) {
        return params && params.colDef ? params.colDef.field : undefined;
    }

    function withGrid(fn) {
        var dag = window.dash_ag_grid;
        if (dag && dag.getApiAsync) {
            dag.getApiAsync(GRID).then(fn).catch(function () { /* grid not drawn */ });
        }
    }

    // --- functions named in the column definitions ({"function": "benchMarked(...)"})
    var fns = window.dashAgGridFunctions = window.dashAgGridFunctions || {};

    /** Whether a cell carries a mark of this kind ('bad', 'pending' or 'misfit'). */
    fns.benchMarked = function (params, kind) {
        var m = rowMarks(params);
        if (!m) { return false; }
        if (kind === 'misfit') { return m.misfit === true; }
        return !!(m[kind] && m[kind][field(params)]);
    };

    /** The hover text of a cell: why it is marked, else the row's RED and verdict. */
    fns.benchTip = function (params) {
        var m = rowMarks(params), col = field(params);
        if (!m) { return undefined; }
        if (m.bad && m.bad[col]) { return m.bad[col]; }
        if (m.pending && m.pending[col]) { return m.pending[col]; }
        if (m.red && (col === 'solvent' || col === 'outcome')) { return m.red; }
        return undefined;
    };

    // --- components named in the column definitions (cellEditor / cellRenderer)
    var comps = window.dashAgGridComponentFunctions = window.dashAgGridComponentFunctions || {};

    /** Solvent cell editor: a plain text input on the page's <datalist id="solvent-names">
        (the browser's own type-ahead); any text is kept, so a blend or an own solvent
        can be typed. */
    comps.BenchSolventEditor = function (props) {
        var e = React.createElement;
        var ref = React.useRef(null);
        var first = props.value === null || props.value === undefined ? '' : String(props.value);
        if (props.eventKey === 'Backspace' || props.eventKey === 'Delete') {
            first = '';
        } else if (props.eventKey && props.eventKey.length === 1) {
            first = props.eventKey;  // editing started by typing: that key starts the text
        }
        var state = React.useState(first), text = state[0], setText = state[1];
        React.useEffect(function () {
            props.onValueChange(first === '' ? null : first);
            var el = ref.current;
            if (el) {
                el.focus();
                if (first.length > 1) { el.select(); }
            }
        }, []);
        return e('input', {
            ref: ref, type: 'text', list: 'solvent-names', autoComplete: 'off',
            className: 'bench-solvent-editor', value: text,
            'aria-label': 'solvent',
            onChange: function (ev) {
                setText(ev.target.value);
                props.onValueChange(ev.target.value === '' ? null : ev.target.value);
            }
        });
    };

    /** The small delete button of a row: tells the server which row (its place in the
        data) through the grid's cellRendererData. */
    comps.BenchDeleteButton = function (props) {
        return React.createElement('button', {
            type: 'button', className: 'bench-delete', title: 'Delete this row',
            'aria-label': 'Delete this row',
            onClick: function (ev) { ev.stopPropagation(); props.setData('delete'); }
        }, '\u00d7');
    };

    // --- clientside callbacks (ClientsideFunction("solsphereBench", ...))
    var cs = window.dash_clientside = window.dash_clientside || {};
    cs.solsphereBench = {
        /** New marks from the server: keep them and redraw the cells' classes. */
        showMarks: function (m) {
            marks = m || {};
            withGrid(function (api) { api.refreshCells({force: true}); });
            return Object.keys(marks).length;
        },

        /** Scroll to a row the user just added (its place in the data) once the grid has
            it; an empty row gets its solvent cell opened for typing. A row added from
            another screen (Next trials) is shown when the grid's screen is shown again. */
        showRow: function (target) {
            if (!target || target.row === undefined) { return window.dash_clientside.no_update; }
            var el = document.getElementById(GRID);
            if (el && el.offsetParent === null) {  // on a hidden screen: show it later
                pendingRow = target;
                return window.dash_clientside.no_update;
            }
            pendingRow = null;
            withGrid(function (api) {
                var tries = 0;
                var find = function () {
                    var found = null, count = 0;
                    api.forEachNode(function (n) {
                        count++;
                        if (n.sourceRowIndex === target.row) { found = n; }
                    });
                    return count === target.rows ? found : null;
                };
                var show = function () {
                    var node = find();
                    if (!node || node.rowIndex === null || node.rowIndex === undefined) {
                        if (tries++ < 80) { setTimeout(show, 50); }
                        return;  // filtered out or not drawn yet
                    }
                    api.ensureIndexVisible(node.rowIndex, 'bottom');
                    if (target.edit) {
                        api.setFocusedCell(node.rowIndex, 'solvent');
                        api.startEditingCell({rowIndex: node.rowIndex, colKey: 'solvent'});
                    } else {
                        api.flashCells({rowNodes: [node]});
                    }
                };
                show();
            });
            return Date.now();
        },

        /** The tab shown: on the results' screen, a row added meanwhile is shown (once
            the screen is visible: another callback shows it). */
        showPendingRow: function (tab) {
            if (tab !== 'bench' || !pendingRow) { return window.dash_clientside.no_update; }
            var target = pendingRow, tries = 0;
            var later = function () {
                var el = document.getElementById(GRID);
                if (el && el.offsetParent === null && tries++ < 60) {
                    setTimeout(later, 50);
                    return;
                }
                cs.solsphereBench.showRow(target);
            };
            setTimeout(later, 0);
            return Date.now();
        }
    };

    // --- paste from a spreadsheet: a block of cells lands at the focused cell
    document.addEventListener('paste', function (ev) {
        var grid = document.getElementById(GRID), t = ev.target;
        if (!grid || !t || !grid.contains(t)) { return; }
        if (/^(INPUT|TEXTAREA|SELECT)$/.test(t.tagName) ||
                (t.closest && t.closest('.ag-cell-inline-editing, .ag-popup-editor'))) {
            return;  // a cell being edited: the browser's own paste into its input
        }
        var dag = window.dash_ag_grid, api = dag && dag.getApi ? dag.getApi(GRID) : null;
        var cell = api ? api.getFocusedCell() : null;
        var node = cell ? api.getDisplayedRowAtIndex(cell.rowIndex) : null;
        var data = ev.clipboardData || window.clipboardData;
        var text = data ? data.getData('text/plain') : '';
        if (!node || node.sourceRowIndex === null || node.sourceRowIndex === undefined || !text) {
            return;
        }
        ev.preventDefault();
        window.dash_clientside.set_props('bench-paste', {data: {
            row: node.sourceRowIndex, column: cell.column.getColId(), text: text,
            nonce: Date.now()
        }});
    }, true);
}());
