-- Data frames from Lua: read_csv, read_sql, columns, summaries and the
-- derived frames.  Expected values: tests/data/orchard.csv read with pandas
-- 1.5.3 (Debian python3-pandas) unless a comment says "by hand"; the
-- SHA-256 from sha256sum.
local D = "tests/data/"

local function tmpname(ext)
  local p = os.tmpname()
  os.remove(p)
  return p .. ext
end

-- Numbers compared as numbers (columns hold floats: 1.0 == 1).
local function same_values(actual, expected, what)
  eq(#actual, #expected, (what or "values") .. ": length")
  for i = 1, #expected do eq(actual[i], expected[i], (what or "values") .. " " .. i) end
end

-- Capture what hooks.warn would print while fn runs.
local function warnings_of(fn)
  local got = {}
  local old = io.stderr
  io.stderr = {write = function(_, ...) got[#got + 1] = table.concat({...}) end}
  local ok, err = pcall(fn)
  io.stderr = old
  if not ok then error(err, 2) end
  return got
end

test("read_csv: shape, names, types and values", function()
  local f = read_csv(D .. "orchard.csv")
  eq(#f, 8, "rows")
  same_list(f:names(), {"plot", "variety", "rain", "yield", "pests"})
  eq(f.rain.type, "number")
  eq(f.variety.type, "category")
  eq(f.rain.name, "rain")
  eq(#f.rain, 8)
  eq(f.rain[1], 71.5)
  eq(f.rain[5], nil, "NaN is missing")
  eq(f.yield[3], nil, "empty is missing")
  eq(f.yield[6], nil, '"." is missing')
  eq(f.pests[2], nil, "NA is missing")
  eq(f.variety[4], "braeburn")
  eq(f.rain[0], nil)
  eq(f.rain[9], nil)
  same_list(f.variety:levels(), {"braeburn", "fuji", "gala"})
  eq(f:column("yield")[1], 12.25)
end)

test("column statistics (pandas)", function()
  local f = read_csv(D .. "orchard.csv")
  eq(math.abs(f.rain:mean() - 67.42857142857143) < 1e-12, true, "mean")
  eq(math.abs(f.rain:sd() - 8.54731230382087) < 1e-12, true, "sd")
  eq(f.rain:min(), 55)
  eq(f.rain:max(), 80.25)
  eq(f.rain:median(), 68.5)
  eq(f.yield:sum(), 62.25, "sum of 12.25 10.5 8.75 11 9.5 10.25, by hand")
  eq(f.yield:missing(), 2)
  eq(f.variety:missing(), 0)
  local v = f.yield:values()
  eq(#v, 8)
  eq(v[3], false, "missing as false in values()")
  eq(v[8], 10.25)
  raises(function() return f.variety:mean() end, "column 'variety' is categorical: it has no mean")
  raises(function() return f.rain:levels() end, "holds numbers")
end)

test("summary (pandas) and its printed table", function()
  local s = read_csv(D .. "orchard.csv"):summary()
  eq(#s, 5)
  eq(s[4].column, "yield")
  eq(s[4].n, 6)
  eq(s[4].missing, 2)
  eq(s[4].q1, 9.6875)
  eq(s[4].median, 10.375)
  eq(s[4].q3, 10.875)
  eq(math.abs(s[4].sd - 1.2119199643540823) < 1e-12, true, "sd")
  eq(s[2].levels, 3)
  eq(s[2].mean, nil)
  local text = tostring(s)
  eq(text:find("column%s+type%s+n%s+missing%s+levels%s+mean%s+sd%s+min%s+q1%s+median%s+q3%s+max")
     ~= nil, true, "header line")
  -- 4 significant digits: 67.43, 8.547, 61.88
  eq(text:find("rain%s+number%s+7%s+1%s+67.43%s+8.547%s+55%s+61.88%s+68.5%s+72.25%s+80.25")
     ~= nil, true, "rain line:\n" .. text)
  eq(text:find("variety%s+category%s+8%s+0%s+3\n") ~= nil, true, "variety line")
end)

test("tostring of a frame: types, first rows, more rows (see test_frame_print.lua)", function()
  local f = read_csv(D .. "orchard.csv")
  local text = tostring(f)
  local lines = {}
  for l in text:gmatch("[^\n]+") do lines[#lines + 1] = l end
  eq(lines[1], "data frame, 8 rows; numbers: plot, rain, yield, pests; categories: variety")
  eq(lines[2]:match("^row%s+plot%s+variety%s+rain%s+yield%s+pests$") ~= nil, true, lines[2])
  eq(lines[3]:find("^%s*1%s+1%s+gala%s+71.5%s+12.25%s+3$") ~= nil, true, lines[3])
  eq(#lines, 10, "the types, the header and 8 rows")
  local big
  warnings_of(function() big = read_csv(D .. "typo.csv", {coerce = true}) end)
  eq(tostring(big):find("20 rows (the first 10 shown)", 1, true) ~= nil, true, "20 rows show 10")
  eq(tostring(f.yield), "yield (number, 8 rows, 2 missing): 12.25, 10.5, NA, 8.75, 11, NA, 9.5, 10.25")
end)

test("delimiters, quoting, BOM and options", function()
  local c = read_csv(D .. "classroom.csv")
  eq(c.score.type, "category", "one '-' in five is more than 10% text")
  local c2 = read_csv(D .. "classroom.csv", {na = {"-"}})
  eq(c2.score.type, "number")
  eq(c2.score[4], nil)
  eq(read_csv(D .. "classroom.csv", {na = "-"}).score.type, "number", "na as one string")
  local t = read_csv(D .. "factory.tsv")
  eq(t.output[2], 1150.5)
  eq(read_csv(D .. "factory.tsv", {delim = "tab"}).output[2], 1150.5)
  local q = read_csv(D .. "quoted.csv")
  eq(q:names()[1], "id")
  eq(q.note[2], 'said "prune"')
  eq(q.note[3], "two\nlines")
  eq(q.weight[5], -0.001)
  -- issue 12: a delimiter the header lacks gave one column silently
  raises(function() read_csv(D .. "orchard.csv", {delim = ";"}) end,
         "orchard.csv, row 1: delim = ';' does not occur in the header line, which seems to use ','")
  raises(function() read_csv(D .. "factory.tsv", {delim = ","}) end,
         "delim = ',' does not occur in the header line, which seems to use tab")
  local path = os.tmpname()
  local fh = assert(io.open(path, "w")); fh:write("yield\n1\n2\n"); fh:close()
  same_list(read_csv(path, {delim = ";"}):names(), {"yield"}, "one column, no delimiter at all")
  os.remove(path)
  raises(function() read_csv(D .. "orchard.csv", {delim = "x"}) end, "option delim must be one of")
  raises(function() read_csv(D .. "orchard.csv", {coerse = true}) end,
         "unknown option 'coerse'; did you mean 'coerce'?")
  raises(function() read_csv(D .. "orchard.csv", {na = {1}}) end, "item 1 is a number")
end)

test("read_csv errors name file, row and column", function()
  raises(function() read_csv(D .. "typo.csv") end,
         "read_csv: tests/data/typo.csv, row 13, column 3 ('yield'): expected a number, " ..
         "found 'n/a' (use {coerce = true} to read it as missing)")
  raises(function() read_csv(D .. "ragged.csv") end, "ragged.csv, row 4: 4 fields, the header has 5")
  raises(function() read_csv(D .. "dup.csv") end, "columns 2 and 5 are both named 'yield'")
  raises(function() read_csv(D .. "header_only.csv") end, "has a header but no rows")
  raises(function() read_csv(D .. "empty.csv") end, "empty.csv is empty")
  raises(function() read_csv(D .. "unterminated.csv") end, "row 3, column 2: a quoted field is never closed")
  raises(function() read_csv(D .. "nope.csv") end, "cannot open 'tests/data/nope.csv'")
  raises(function() read_csv() end, "bad argument #1")
end)

test("coerce: missing cells, a warning and f:warnings()", function()
  local f
  local printed = warnings_of(function() f = read_csv(D .. "typo.csv", {coerce = true}) end)
  eq(f.yield.type, "number")
  eq(f.yield[12], nil)
  eq(f.yield[13], 10 + 13 / 4, "by hand: plot i has yield 10 + i/4")
  local w = f:warnings()
  eq(#w, 1)
  eq(w[1], "tests/data/typo.csv: 1 cell that is not a number read as missing " ..
           "(the first: row 13, column 3 ('yield'): 'n/a')")
  eq(#printed, 1)
  eq(printed[1], "warning: " .. w[1] .. "\n")
  eq(#read_csv(D .. "orchard.csv"):warnings(), 0)
end)

test("frames are read-only; unknown columns suggest a name", function()
  local f = read_csv(D .. "orchard.csv")
  raises(function() f.yield = 1 end, "frames are read-only; use f:with_column or f:binarize")
  raises(function() f.yield[1] = 1 end, "frames are read-only")
  raises(function() return f.yeild end, "no column 'yeild'; did you mean 'yield'?")
  raises(function() return f[1] end, "indexed by column name")
  raises(function() f:column("rian") end, "did you mean 'rain'?")
  -- nothing near: the columns are listed (before: only "no column 'nope'")
  raises(function() return f["nope"] end, "no column 'nope' (the columns: plot, variety, rain, yield, pests)")
end)

test("head, select, filter, row", function()
  local f = read_csv(D .. "orchard.csv")
  eq(#f:head(), 6)
  eq(#f:head(3), 3)
  eq(#f:head(0), 0)
  eq(#f:head(100), 8)
  raises(function() f:head(-1) end, "0 or more")
  local s = f:select{"yield", "plot"}
  same_list(s:names(), {"yield", "plot"})
  same_list(f:select("pests", "rain"):names(), {"pests", "rain"})
  raises(function() f:select{"yield", "yield"} end, "listed twice")
  raises(function() f:select{"yeild"} end, "did you mean 'yield'?")
  local gala = f:filter(function(r) return r.variety == "gala" end)
  eq(#gala, 3)
  same_values(gala.plot:values(), {1, 3, 6})
  local wet = f:filter(function(r) return r.rain and r.rain > 70 end)
  same_values(wet.plot:values(), {1, 3, 7}, "rain 71.5, 80.25, 73 by hand")
  local odd = f:filter(function(_, i) return i % 2 == 1 end)
  same_values(odd.plot:values(), {1, 3, 5, 7})
  local r = f:row(2)
  eq(r.variety, "fuji")
  eq(r.pests, nil)
  raises(function() f:row(9) end, "row 9 is outside 1..8")
end)

test("binarize: 1 above the cut, 0 otherwise, missing stays missing", function()
  local f = read_csv(D .. "orchard.csv")
  local b = f:binarize("rain", 68.5)
  -- rain 71.5 64 80.25 55 NaN 68.5 73 59.75, by hand
  local v = b.rain_high:values()
  same_values(v, {1, 0, 1, 0, false, 0, 1, 0})
  eq(#b:names(), 6)
  eq(#f:names(), 5, "the original is unchanged")
  eq(f:binarize("rain", 60, "wet").wet[8], 0)
  raises(function() f:binarize("variety", 1) end, "is categorical: give the level")
  raises(function() f:binarize("rain", 1, "yield") end, "column 'yield' already exists")
  raises(function() f:binarize("rain") end, "number expected")
end)

test("with_column: add or replace, from a list or a function", function()
  local f = read_csv(D .. "orchard.csv")
  local g = f:with_column("double", function(r) return r.rain and r.rain * 2 end)
  eq(g.double[1], 143)
  eq(g.double[5], nil)
  local h = f:with_column("rain", {1, 2, 3, 4, 5, 6, 7, 8})
  same_list(h:names(), f:names(), "replaced in place")
  eq(h.rain[8], 8)
  local t = f:with_column("size", {"big", "small", false, "big", "big", "small", "big", "big"})
  eq(t.size.type, "category")
  same_list(t.size:levels(), {"big", "small"})
  eq(t.size[3], nil)
  raises(function() f:with_column("x", {1, 2}) end, "2 values for a frame of 8 rows")
  raises(function() f:with_column("x", {1, "a", 1, 1, 1, 1, 1, 1}) end, "mix numbers and texts")
end)

test("write_csv round trip", function()
  local f = read_csv(D .. "quoted.csv"):with_column("third", function(r) return r.weight / 3 end)
  local path = tmpname(".csv")
  eq(f:write_csv(path), path)
  local g = read_csv(path)
  os.remove(path)
  same_list(g:names(), f:names())
  for i = 1, #f do
    eq(g.third[i], f.third[i], "bit-exact third " .. i)
    eq(g.note[i], f.note[i], "note " .. i)
  end
  eq(g:fingerprint() ~= f:fingerprint(), true)
  raises(function() f:write_csv("/nonexistent/x.csv") end, "write_csv: cannot write")
end)

test("fingerprint: SHA-256 of the file (sha256sum), nil for derived frames", function()
  local f = read_csv(D .. "orchard.csv")
  local hex, bytes = f:fingerprint()
  eq(hex, "4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4")
  eq(bytes, 177)
  eq(f:head(2):fingerprint(), nil)
end)

test("read_sql", function()
  local db = tmpname(".db")
  -- the database is made by the sqlite3 command line tool when present
  local ok = os.execute("command -v sqlite3 >/dev/null 2>&1")
  if not ok then return end
  local cmd = string.format("sqlite3 %q \"CREATE TABLE trees (id INTEGER, kind TEXT, " ..
    "height REAL); INSERT INTO trees VALUES (1, 'oak', 12.5), (2, 'ash', NULL), " ..
    "(3, NULL, 7.25);\"", db)
  eq(os.execute(cmd), true, "sqlite3")
  local f = read_sql(db, "SELECT * FROM trees ORDER BY id")
  eq(#f, 3)
  same_list(f:names(), {"id", "kind", "height"})
  eq(f.height[1], 12.5)
  eq(f.height[2], nil)
  eq(f.kind[3], nil)
  eq(f.kind.type, "category")
  local hex = f:fingerprint()
  eq(#hex, 64)
  raises(function() read_sql(db, "SELEC * FROM trees") end, 'read_sql: near "SELEC": syntax error')
  raises(function() read_sql(db, "SELECT * FROM tree") end, "read_sql: no such table: tree")
  -- an endless recursive query ends at the row limit (before, it ran until killed)
  local endless = "WITH RECURSIVE r(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM r) SELECT i FROM r"
  raises(function() read_sql(db, endless, {limit = 100}) end,
         "read_sql: the query returned more than 100 rows; give {limit = ...} to read more")
  eq(#read_sql(db, "SELECT * FROM trees", {limit = 3}), 3, "exactly the limit")
  eq(#read_sql(db, "SELECT * FROM trees", {limit = math.huge}), 3, "no limit")
  raises(function() read_sql(db, "SELECT * FROM trees", {limit = 2}) end, "more than 2 rows")
  raises(function() read_sql(db, "SELECT 1", {limit = 0}) end,
         "read_sql: option limit must be a whole number of rows, 1 or more (math.huge for no limit), got 0")
  raises(function() read_sql(db, "SELECT 1", {limit = 2.5}) end, "got 2.5")
  raises(function() read_sql(db, "SELECT 1", {limit = 0/0}) end, "got NaN")
  raises(function() read_sql(db, "SELECT 1", {limit = "10"}) end,
         "read_sql: option limit must be a number of rows, got a string")
  raises(function() read_sql(db, "SELECT 1", {limt = 10}) end,
         "read_sql: unknown option 'limt'; did you mean 'limit'?")
  os.remove(db)
  raises(function() read_sql(db, "SELECT 1") end, "No such file or directory")
end)

test("hooks.data_read hears of every file read (for the session log)", function()
  local hooks = debug.getregistry()["sluice.hooks"]
  local heard = {}
  local old = hooks.data_read
  hooks.data_read = function(path, hex, bytes) heard[#heard + 1] = {path, hex, bytes} end
  local ok, err = pcall(read_csv, D .. "orchard.csv")
  hooks.data_read = old
  assert(ok, err)
  eq(#heard, 1)
  eq(heard[1][1], D .. "orchard.csv")
  eq(heard[1][2], "4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4")
  eq(heard[1][3], 177)
end)

-- A device never ends and a pipe with no writer blocks: both are refused
-- by name before a byte is read (before, read_csv("/dev/zero") grew
-- without end and a pipe hung the shell).
test("read_csv and read_sql refuse devices, pipes and directories", function()
  raises(function() read_csv("/dev/zero") end,
         "read_csv: /dev/zero is not a regular file (a device); sluice reads data from regular files")
  raises(function() read_csv("/dev/urandom") end, "/dev/urandom is not a regular file (a device)")
  raises(function() read_sql("/dev/zero", "SELECT 1") end,
         "read_sql: /dev/zero is not a regular file (a device)")
  raises(function() read_csv("tests/data") end, "tests/data is not a regular file (a directory)")
  local fifo = tmpname(".csv")
  if os.execute("mkfifo " .. fifo .. " 2>/dev/null") then
    raises(function() read_csv(fifo) end, "is not a regular file (a pipe)")
    raises(function() read_sql(fifo, "SELECT 1") end, "is not a regular file (a pipe)")
    os.remove(fifo)
  end
end)

-- A NUL byte in a name used to cut the name short without a word.
test("read_csv: a NUL byte in the header is an error naming row and column", function()
  local path = tmpname(".csv")
  local h = assert(io.open(path, "wb"))
  h:write("abcdef\0gh,b\n1,2\n")
  h:close()
  raises(function() read_csv(path) end, ", row 1, column 1: a NUL byte in the header (is this a text file?)")
  os.remove(path)
end)

-- A one-column frame {1, nil, 3, nil, 5} was written with blank lines and
-- read back as 3 rows (found by make fuzz).
test("write_csv then read_csv keeps every row of a one-column frame", function()
  local f = read_csv(D .. "orchard.csv"):with_column("v", {1, false, 3, false, 5, 6, false, 8})
  local one = f:select{"v"}
  local path = tmpname(".csv")
  one:write_csv(path)
  local g = read_csv(path)
  eq(#g, 8, "rows")
  same_values(g.v:values(), {1, false, 3, false, 5, 6, false, 8})
  local t = f:with_column("w", {"a,b", false, 'say "hi"', false, "x\ny", false, false, "z"}):select{"w"}
  t:write_csv(path)
  same_values(read_csv(path).w:values(), {"a,b", false, 'say "hi"', false, "x\ny", false, false, "z"})
  local na = f:with_column("grade", {"A", "B", "NA", "A", "B", "A", "A", "B"})
  raises(function() na:write_csv(path) end,
         "write_csv: column 'grade', row 3: the text 'NA' would read back as a missing value")
  os.remove(path)
end)

-- Infinities are values: the mean of {1, 2, inf, 3} is inf (pandas 1.5.3
-- Series.mean), its sd is nil (pandas: NaN); it was nil for the mean too.
-- "1e400" was read as inf without a word; it is now a text, named in the
-- error of a column of numbers.
test("inf in a column, and numbers beyond the range of a double", function()
  local path = tmpname(".csv")
  local h = assert(io.open(path, "w"))
  h:write("id,x\n1,1\n2,2\n3,inf\n4,3\n")
  h:close()
  local f = read_csv(path)
  eq(f.x:mean(), math.huge)
  eq(f.x:sd(), nil)
  eq(f.x:max(), math.huge)
  eq(f.x:median(), 2.5)
  local s = f:summary()[2]
  eq(s.mean, math.huge)
  eq(s.sd, nil)
  eq(s.q1, 1.75)
  eq(s.q3, math.huge)
  h = assert(io.open(path, "w"))
  h:write("id,x\n1,-inf\n2,inf\n3,1\n")
  h:close()
  eq(read_csv(path).x:mean(), nil, "inf and -inf: no mean")
  eq(read_csv(path).x:sum(), nil, "inf and -inf: no sum")
  h = assert(io.open(path, "w"))
  h:write("id,x\n")
  for i = 1, 20 do h:write(i, ",", i == 5 and "1e400" or i, "\n") end
  h:close()
  raises(function() read_csv(path) end, ", row 6, column 2 ('x'): '1e400' is beyond the range " ..
         "of a number (about 1.8e308; write inf for an infinity, or use {coerce = true} to read it as missing)")
  os.remove(path)
end)

-- d:row(1e18) said "row -1486618624 is outside 1..8" (the index wrapped
-- through an int); non-integers said "number has no integer representation".
test("row and head: whole numbers, in range, named in the error", function()
  local f = read_csv(D .. "orchard.csv")
  raises(function() f:row(1e18) end, "bad argument #1 to 'f:row' (row 1e+18 is outside 1..8, the rows of the frame)")
  raises(function() f:row(2^63) end, "row 9.2233720368548e+18 is outside 1..8")
  raises(function() f:row(math.mininteger) end, "row -9223372036854775808 is outside 1..8")
  raises(function() f:row(0) end, "row 0 is outside 1..8")
  raises(function() f:row(-1) end, "row -1 is outside 1..8")
  raises(function() f:row(math.huge) end, "row inf is outside 1..8")
  raises(function() f:row(1.5) end, "bad argument #1 to 'f:row' (the row must be a whole number, got 1.5)")
  raises(function() f:row(0/0) end, "the row must be a whole number, got NaN")
  raises(function() f:row("x") end, "number expected, got string")
  eq(f:row(8.0).plot, 8, "a whole float is a row")
  raises(function() f:head(1.5) end, "bad argument #1 to 'f:head' (the number of rows must be a whole number, got 1.5)")
  raises(function() f:head(0/0) end, "the number of rows must be a whole number, got NaN")
  raises(function() f:head(-1) end, "the number of rows must be 0 or more, got -1")
  raises(function() f:head(math.mininteger) end, "0 or more, got -9223372036854775808")
  eq(#f:head(1e18), 8, "more rows than the frame has: all of them")
  eq(#f:head(2^63), 8)
  eq(#f:head(math.huge), 8)
  eq(#f:head(3.0), 3)
end)
