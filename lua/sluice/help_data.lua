-- sluice.help_data: help entries for data frames (topic "data"), in the
-- form of sluice.help's H.entries, to be merged there.  Frame methods are
-- named "f:name", column methods "c:name".
return {
  { name = "read_csv", topic = "data",
    sig = "read_csv(path, {delim=, na=, coerce=})",
    brief = "Read a CSV file into a data frame",
    returns = "a data frame",
    summary = [[Read a CSV file with a header row (RFC 4180 quoting, a UTF-8 byte-order mark
and CRLF allowed). The delimiter is found from the header line (comma,
semicolon or tab) unless delim = "," ";" "|" "tab" or " " is given; a given
delim that the header line lacks while it holds another is an error. Missing
values: empty cells, NA, NaN, "." and the texts of na (a string or a list).
Each column is numeric when all its other cells are numbers, categorical
when more than 10% of them are text. A column of numbers with a few texts
(at most 10%, such as "1,5" or "n/a") is an error naming the file, row and
column; with coerce = true those cells become missing and a warning says
how many (also in f:warnings()). Rows are lines of the file, the header
being row 1. inf and -inf are numbers (a mean over them is inf, or nil
when both occur; the sd is nil); a number beyond the range of a double,
such as 1e400, is text, never read as inf. Only regular files are read: a
device, pipe or folder is refused by name. Ctrl-C stops a read. Limits:
65536 columns, 256 MiB in one cell, 2^31 - 1 lines.]],
    example = [[plots = read_csv("orchard.csv", {na = {"-999"}, coerce = true})]] },
  { name = "read_sql", topic = "data",
    sig = "read_sql(dbfile, query, {limit=})",
    brief = "Read the result of an SQL query on an SQLite file",
    returns = "a data frame",
    summary = [[Run one query on an SQLite database, opened read-only. INTEGER and REAL values
are numbers, TEXT values categories, NULL missing; a column mixing numbers
and text is categorical. SQLite's error messages are shown as they are.
At most limit rows are read (10000000 unless given; math.huge for no
limit): a query that returns more, such as an endless recursive one, is an
error saying so. Ctrl-C stops a query. dbfile must be a regular file.
f:fingerprint() gives the SHA-256 of the database file.]],
    example = [[trees = read_sql("survey.db", "SELECT id, kind, height FROM trees")]] },
  { name = "f:names", topic = "data",
    sig = "f:names()",
    brief = "The column names of a frame",
    returns = "list of names, in file order",
    summary = [[The names of the columns. #f is the number of rows. Frames are read-only:
f:with_column, f:binarize, f:select and f:filter give new frames.]],
    example = [[plots:names()]] },
  { name = "f:column", topic = "data",
    sig = "f:column(name), f[name]",
    brief = "One column of a frame",
    returns = "a read-only column c",
    summary = [[A column: #c rows, c[i] the value of row i (a number, the text of a category,
or nil when missing), c.name, c.type ("number" or "category") and the
methods c:mean(), c:sd(), c:min(), c:max(), c:median(), c:sum(),
c:missing(), c:values(), c:levels(). f[name] is the same, except for a
column named like a frame method (f.summary is the method). An unknown
name suggests the closest one.]],
    example = [[plots.yield:mean()]] },
  { name = "f:summary", topic = "data",
    sig = "f:summary()",
    brief = "Counts, mean, sd and quartiles of every column",
    returns = "list of {column=, type=, n=, missing=, mean=, sd=, min=, q1=, median=, q3=, max=}",
    summary = [[One row per column over its non-missing values; it prints as a table (4
significant digits) with each column's type ("number" or "category"). sd
divides by n - 1; quartiles by the type-7 rule (R's default). A categorical
column has n, missing and levels (how many).]],
    example = [[plots:summary()]] },
  { name = "f:head", topic = "data",
    sig = "f:head([n])",
    brief = "The first rows of a frame",
    returns = "a frame of the first n rows (default 6)",
    summary = [[The first n rows as a new frame. tostring(f) (what the prompt shows for a
frame) begins with one line that gives the number of rows and the columns by
type, in the words of c.type: "data frame, 200 rows (the first 10 shown);
numbers: age, yield; categories: soil", wrapped at 80 columns; then a table
of the first 10 rows, each led by its row number (as for f:row(i)), missing
values shown as NA.]],
    example = [[plots:head(3)]] },
  { name = "f:binarize", topic = "data",
    sig = "f:binarize(col, cut or levels, [name])",
    brief = "Add a 0/1 column from a cut or from levels",
    returns = "a new frame with the column added",
    summary = [[A copy of f with a column that is 1 where col is above cut, 0 where it is not,
and missing where col is missing; name defaults to col .. "_high". For a
categorical col give a level or a list of levels to count as 1 (a level
not in col is an error with the nearest one); name defaults to col .. "_"
.. level, or col .. "_in" for a list.]],
    example = [[plots2 = plots:binarize("rain", 70, "wet"); p3 = plots:binarize("variety", {"gala", "fuji"}, "sweet")]] },
  { name = "f:select", topic = "data",
    sig = "f:select{col, ...}",
    brief = "Some columns of a frame, in a given order",
    returns = "a new frame",
    summary = "A frame of the listed columns in the order given (f:select(a, b) works too).",
    example = [[plots:select{"yield", "rain"}]] },
  { name = "f:filter", topic = "data",
    sig = "f:filter(fn)",
    brief = "The rows for which a function is true",
    returns = "a new frame",
    summary = [[The rows where fn(row, i) is neither nil nor false. row is a table
{column = value}; missing values are absent (nil).]],
    example = [[plots:filter(function(r) return r.variety == "gala" end)]] },
  { name = "f:row", topic = "data",
    sig = "f:row(i)",
    brief = "One row as a table",
    returns = "{column = value}",
    summary = "Row i (1-based) as a table; missing values are absent.",
    example = [[plots:row(1).yield]] },
  { name = "f:with_column", topic = "data",
    sig = "f:with_column(name, values)",
    brief = "Add or replace a column",
    returns = "a new frame",
    summary = [[A copy of f with column name set from values: a list of #f numbers or texts
(nil or false for missing), or a function fn(row, i) giving each value. A
column of that name is replaced in place.]],
    example = [[plots:with_column("rain_cm", function(r) return r.rain and r.rain / 10 end)]] },
  { name = "f:write_csv", topic = "data",
    sig = "f:write_csv(path)",
    brief = "Write a frame as CSV",
    returns = "path",
    summary = [[Write f with a header row. Numbers are written in the shortest form that reads
back to the same double, missing values as empty cells ("" when f has one
column), texts quoted when needed, so that read_csv gives back the same
frame (but for levels no row uses, and a column of texts that all read as
numbers, which comes back as numbers). A text that would read back as
missing (empty, NA, NaN or ".") is an error naming its column and row.
A frame with no rows writes only the header, which read_csv refuses.]],
    example = [[plots:write_csv("plots_clean.csv")]] },
  { name = "f:fingerprint", topic = "data",
    sig = "f:fingerprint()",
    brief = "SHA-256 of the file a frame was read from",
    returns = "hex digest and byte count, or nil for a derived frame",
    summary = [[The SHA-256 of the file (CSV or SQLite) as read, and its size in bytes. The
session log records it, so that a replay can tell whether the data changed.]],
    example = [[print(plots:fingerprint())]] },
  { name = "f:warnings", topic = "data",
    sig = "f:warnings()",
    brief = "The warnings of reading a frame",
    returns = "list of texts",
    summary = "What read_csv warned about (for example cells read as missing with coerce = true).",
    example = [[plots:warnings()]] },
  { name = "c:mean", topic = "data",
    sig = "c:mean(), c:sd(), c:min(), c:max(), c:median(), c:sum()",
    brief = "Statistics of a numeric column",
    returns = "a number (nil when the column has no values)",
    summary = [[Over the non-missing values; sd divides by n - 1 (nil below two values). A
categorical column is an error.]],
    example = [[plots.yield:sd()]] },
  { name = "c:missing", topic = "data",
    sig = "c:missing()",
    brief = "How many values of a column are missing",
    returns = "a count",
    summary = "The number of missing cells.",
    example = [[plots.yield:missing()]] },
  { name = "c:values", topic = "data",
    sig = "c:values()",
    brief = "A column as a Lua list",
    returns = "list of #c values",
    summary = [[Every value of the column: numbers, or texts for a categorical column. Missing
values are false (not nil), so that the list has no holes.]],
    example = [[for i, v in ipairs(plots.yield:values()) do print(i, v) end]] },
  { name = "c:levels", topic = "data",
    sig = "c:levels()",
    brief = "The categories of a categorical column",
    returns = "list of texts, sorted bytewise",
    summary = "The distinct texts of a categorical column. A numeric column is an error.",
    example = [[plots.variety:levels()]] },
}
