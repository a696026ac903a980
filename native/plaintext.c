/*
 * logbook_plaintext: parse the data rows of a plain numeric text table into
 * float64 columns, fast, or decline.
 *
 * The ingest reader (logbook/ingest/reader.py) calls this first for the data part
 * of a CSV or TSV file. It accepts only text that is unambiguously plain:
 *
 *     row   := cell (DELIMITER cell){columns - 1} ("\n" | "\r\n" | end of data)
 *     cell  := [+-]? (digits [MARK digits?] | MARK digits) ([eE] [+-]? digits)?
 *
 * with nothing after the last row but empty lines ("\r" and "\n"). Anything else
 * (spaces or tabs outside a delimiter, quotes, NaN or infinity spellings, blank
 * lines inside the data, a short or long row, more rows than the caller has room
 * for) makes it decline, and the reader's other parsers decide, exactly as for
 * any other file.
 *
 * Values are correctly rounded: a cell is converted only when its digits form an
 * integer m <= 2^53 and its decimal exponent e (after moving the mark) satisfies
 * |e| <= 22. Then m and 10^|e| are exact doubles and one IEEE multiplication or
 * division rounds m * 10^e correctly (W. D. Clinger, "How to read floating point
 * numbers accurately", PLDI 1990: the fast path). A cell outside that range (more
 * than 15-16 significant digits, or a large exponent) also makes the parser
 * decline; the reader then uses pyarrow's reader, which handles every case.
 *
 * The GIL is released while parsing, so threads that prepare files in parallel
 * are not held up.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>

/* Largest integer below which every integer is an exact double. */
#define EXACT_INTEGER_LIMIT (UINT64_C(1) << 53)
/* Most significant digits accumulated (10^19 < 2^64, so no overflow). */
#define MAX_DIGITS 19
/* Largest power of ten that is an exact double. */
#define MAX_EXACT_POWER 22
/* Columns a table may have (the reader's files have a handful). */
#define MAX_COLUMNS 256

static const double POWERS_OF_TEN[MAX_EXACT_POWER + 1] = {
    1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

static inline int is_digit(char c) { return (unsigned char)(c - '0') < 10; }

/* Skip the zeros at *p; return how many there were. */
static inline Py_ssize_t skip_zeros(const char **p, const char *end)
{
    const char *q = *p;
    while (q < end && *q == '0') q++;
    Py_ssize_t skipped = q - *p;
    *p = q;
    return skipped;
}

/*
 * Append the digits at *p to *mantissa, counting them in *digits; return how many
 * there were. Past MAX_DIGITS the mantissa wraps around: the caller then declines.
 */
static inline Py_ssize_t take_digits(const char **p, const char *end, uint64_t *mantissa,
                                     Py_ssize_t *digits)
{
    /* Locals, not the pointers: a char may alias them, so they would be stored back
       at every digit. */
    const char *q = *p;
    uint64_t m = *mantissa;
    while (q < end && is_digit(*q)) {
        m = m * 10 + (uint64_t)(*q - '0');
        q++;
    }
    Py_ssize_t taken = q - *p;
    *p = q;
    *mantissa = m;
    *digits += taken;
    return taken;
}

/*
 * Parse one cell starting at p (p <= end). On success store its value in *out and
 * return the first byte after it; return NULL when the cell is not plain or not
 * on the fast path.
 */
static inline const char *parse_cell(const char *p, const char *end, char mark, double *out)
{
    int negative = 0;
    if (p < end && (*p == '-' || *p == '+')) {
        negative = (*p == '-');
        p++;
    }
    uint64_t mantissa = 0;
    Py_ssize_t digits = 0; /* significant digits */
    Py_ssize_t leading = skip_zeros(&p, end); /* leading zeros carry no significance */
    int seen_digit = leading + take_digits(&p, end, &mantissa, &digits) > 0;
    Py_ssize_t fraction_digits = 0; /* digits after the mark, leading zeros included */
    if (p < end && *p == mark) {
        p++;
        if (digits == 0) fraction_digits = skip_zeros(&p, end);
        fraction_digits += take_digits(&p, end, &mantissa, &digits);
        seen_digit |= fraction_digits > 0;
    }
    if (!seen_digit || digits > MAX_DIGITS) return NULL;
    Py_ssize_t exponent = -fraction_digits;
    if (p < end && (*p == 'e' || *p == 'E')) {
        p++;
        int exponent_negative = 0;
        Py_ssize_t value = 0, exponent_digits = 0;
        if (p < end && (*p == '-' || *p == '+')) {
            exponent_negative = (*p == '-');
            p++;
        }
        while (p < end && is_digit(*p)) {
            if (value < 100000) value = value * 10 + (*p - '0'); /* far past any fast case */
            exponent_digits++;
            p++;
        }
        if (exponent_digits == 0) return NULL;
        exponent += exponent_negative ? -value : value;
    }
    double result;
    if (mantissa == 0) {
        result = 0.0;
    } else {
        if (mantissa > EXACT_INTEGER_LIMIT) return NULL;
        if (exponent < -MAX_EXACT_POWER || exponent > MAX_EXACT_POWER) return NULL;
        result = (double)mantissa;
        if (exponent < 0) {
            result /= POWERS_OF_TEN[-exponent];
        } else {
            result *= POWERS_OF_TEN[exponent];
        }
    }
    *out = negative ? -result : result;
    return p;
}

/*
 * Parse rows from p to end into columns[0..count-1], each with room for capacity
 * values. Return the number of rows, or -1 when the text is not plain or holds more
 * than capacity rows.
 */
static Py_ssize_t parse_rows(const char *p, const char *end, char delimiter, char mark,
                             double *const *columns, Py_ssize_t count, Py_ssize_t capacity)
{
    Py_ssize_t row = 0;
    while (p < end) {
        if (*p == '\r' || *p == '\n') {
            /* Only empty lines may follow the last row. */
            while (p < end && (*p == '\r' || *p == '\n')) p++;
            return p == end ? row : -1;
        }
        if (row == capacity) return -1;
        for (Py_ssize_t c = 0; c < count; c++) {
            double value;
            p = parse_cell(p, end, mark, &value);
            if (p == NULL) return -1;
            columns[c][row] = value;
            if (c + 1 < count) {
                if (p == end || *p != delimiter) return -1;
                p++;
            }
        }
        if (p < end && *p == '\r') p++;
        if (p < end) {
            if (*p != '\n') return -1;
            p++;
        }
        row++;
    }
    return row;
}

PyDoc_STRVAR(parse_columns_doc,
"parse_columns(data, start, delimiter, mark, columns) -> int | None\n"
"\n"
"Parse the plain numeric rows of data[start:] into columns, a list of writable\n"
"float64 buffers of equal length (one per field). Return the number of rows\n"
"parsed, or None when the text is not plain, a value is off the exact fast path,\n"
"or there are more rows than the buffers hold (see the module source).");

static PyObject *parse_columns(PyObject *Py_UNUSED(module), PyObject *args)
{
    Py_buffer data;
    Py_ssize_t start;
    int delimiter, mark;
    PyObject *column_list;
    if (!PyArg_ParseTuple(args, "y*nCCO!:parse_columns", &data, &start, &delimiter, &mark,
                          &PyList_Type, &column_list)) {
        return NULL;
    }
    Py_buffer buffers[MAX_COLUMNS];
    double *columns[MAX_COLUMNS];
    Py_ssize_t count = PyList_GET_SIZE(column_list), held = 0, capacity = -1;
    PyObject *result = NULL;
    if (start < 0 || start > data.len) {
        PyErr_SetString(PyExc_ValueError, "start is outside the data");
        goto done;
    }
    if (count < 1 || count > MAX_COLUMNS) {
        PyErr_Format(PyExc_ValueError, "between 1 and %d columns are supported", MAX_COLUMNS);
        goto done;
    }
    if (delimiter > 127 || mark > 127 || delimiter == mark) {
        PyErr_SetString(PyExc_ValueError, "delimiter and mark must be two different ASCII characters");
        goto done;
    }
    for (; held < count; held++) {
        Py_buffer *buffer = &buffers[held];
        if (PyObject_GetBuffer(PyList_GET_ITEM(column_list, held), buffer,
                               PyBUF_WRITABLE | PyBUF_FORMAT | PyBUF_C_CONTIGUOUS) < 0) {
            goto done;
        }
        if (buffer->itemsize != sizeof(double) || buffer->format == NULL ||
            (buffer->format[0] != 'd' || buffer->format[1] != '\0')) {
            held++;
            PyErr_SetString(PyExc_TypeError, "columns must be float64 buffers");
            goto done;
        }
        Py_ssize_t length = buffer->len / (Py_ssize_t)sizeof(double);
        if (capacity >= 0 && length != capacity) {
            held++;
            PyErr_SetString(PyExc_ValueError, "columns must have equal lengths");
            goto done;
        }
        capacity = length;
        columns[held] = (double *)buffer->buf;
    }
    const char *begin = (const char *)data.buf + start, *end = (const char *)data.buf + data.len;
    Py_ssize_t rows;
    Py_BEGIN_ALLOW_THREADS
    rows = parse_rows(begin, end, (char)delimiter, (char)mark, columns, count, capacity);
    Py_END_ALLOW_THREADS
    if (rows < 0) {
        result = Py_NewRef(Py_None);
    } else {
        result = PyLong_FromSsize_t(rows);
    }
done:
    for (Py_ssize_t i = 0; i < held; i++) PyBuffer_Release(&buffers[i]);
    PyBuffer_Release(&data);
    return result;
}

static PyMethodDef methods[] = {
    {"parse_columns", parse_columns, METH_VARARGS, parse_columns_doc},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {
    PyModuleDef_HEAD_INIT,
    .m_name = "logbook_plaintext",
    .m_doc = "Fast, correctly rounded parsing of plain numeric text tables (see the source).",
    .m_size = -1,
    .m_methods = methods,
};

PyMODINIT_FUNC PyInit_logbook_plaintext(void) { return PyModule_Create(&module); }
