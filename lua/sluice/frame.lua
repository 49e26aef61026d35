-- sluice.frame: how data frames, their columns and summaries print, and
-- where read warnings go.  install() fills the hooks that the C binding
-- (src/bind/bind_frame.c) calls: frame_text, column_text, summary_text and
-- warn.
local F = {}

F.max_rows = 10       -- rows tostring(f) shows
F.max_width = 24      -- characters of a text cell shown

-- Display width of a text (UTF-8 characters; bytes when not valid UTF-8).
local function width(s)
  return utf8.len(s) or #s
end

-- s cut to at most n characters, "..." marking the cut.
local function cut(s, n)
  if width(s) <= n then return s end
  local stop = utf8.offset(s, n - 2)
  if not stop then return s:sub(1, n - 3) .. "..." end
  return s:sub(1, stop - 1) .. "..."
end

-- A text with its line breaks escaped, so that it keeps to one line.
local function visible(s)
  return (s:gsub("\n", "\\n"):gsub("\r", "\\r"))
end

-- A cell as shown in a frame: numbers in up to 6 significant digits,
-- missing as NA, texts with line breaks escaped.
local function cell(v)
  if v == nil or v == false then return "NA" end
  if type(v) == "number" then
    if v == math.floor(v) and math.abs(v) < 1e15 then return string.format("%d", v) end
    return string.format("%.6g", v)
  end
  return cut(visible(v), F.max_width)
end

-- A number in a summary: 4 significant digits.
local function num4(v)
  if v == nil then return "" end
  if v == math.floor(v) and math.abs(v) < 1e6 then return string.format("%d", v) end
  return string.format("%.4g", v)
end

-- Lines of an aligned table; right[j] right-aligns column j.
function F.align(rows, right)
  local w = {}
  for _, r in ipairs(rows) do
    for j, s in ipairs(r) do w[j] = math.max(w[j] or 0, width(s)) end
  end
  local out = {}
  for i, r in ipairs(rows) do
    local parts = {}
    for j, s in ipairs(r) do
      local pad = string.rep(" ", w[j] - width(s))
      parts[j] = right[j] and pad .. s or s .. pad
    end
    out[i] = table.concat(parts, "  "):gsub("%s+$", "")
  end
  return out
end

F.line_width = 80     -- the line of column types wraps at this width

-- Words joined by sep into lines of at most F.line_width characters (a
-- word longer than that stands alone), lines after the first indented.
local function wrap(words, sep)
  local lines, cur = {}, ""
  for i, w in ipairs(words) do
    local piece = w .. (i < #words and sep[i] or "")
    local trimmed = (cur .. piece):gsub("%s+$", "")
    if cur ~= "" and cur ~= "  " and width(trimmed) > F.line_width then
      lines[#lines + 1] = (cur:gsub("%s+$", ""))
      cur = "  "
    end
    cur = cur .. piece
  end
  lines[#lines + 1] = (cur:gsub("%s+$", ""))
  return lines
end

-- The first line(s) of tostring(f): how many rows, which are shown, and
-- the columns by type, in the words of c.type ("number", "category").
local function types_line(f, names, cols, shown)
  local n = #f
  local head = string.format("data frame, %d %s", n, n == 1 and "row" or "rows")
  if shown < n then head = head .. string.format(" (the first %d shown)", shown) end
  local words, seps = {head}, {}
  local groups = {{"number", "numbers: "}, {"category", "categories: "}}
  for _, g in ipairs(groups) do
    local first = true
    for j, name in ipairs(names) do
      if cols[j].type == g[1] then
        seps[#words] = first and "; " or ", "
        words[#words + 1] = (first and g[2] or "") .. visible(name)
        first = false
      end
    end
  end
  if #names == 0 then seps[1] = "; "; words[2] = "no columns" end
  return wrap(words, seps)
end

-- tostring(f): a line saying the size and the column types, then a
-- table of the first rows, each led by its row number.
function F.frame_text(f)
  local names = f:names()
  local head, right, cols = {"row"}, {true}, {}
  for j, name in ipairs(names) do
    head[j + 1] = visible(name)
    cols[j] = f:column(name)
    right[j + 1] = cols[j].type == "number"
  end
  local rows = {head}
  local shown = math.min(#f, F.max_rows)
  for i = 1, shown do
    local r = {tostring(i)}
    for j, c in ipairs(cols) do r[j + 1] = cell(c[i]) end
    rows[#rows + 1] = r
  end
  local lines = types_line(f, names, cols, shown)
  for _, l in ipairs(F.align(rows, right)) do lines[#lines + 1] = l end
  return table.concat(lines, "\n")
end

-- tostring(f[col]): the name, type, counts and the first values.
function F.column_text(c)
  local n, vals = #c, {}
  for i = 1, math.min(n, F.max_rows) do vals[i] = cell(c[i]) end
  local more = n > F.max_rows and string.format(", ... (%d more)", n - F.max_rows) or ""
  return string.format("%s (%s, %d rows, %d missing): %s%s", c.name, c.type, n,
                       c:missing(), table.concat(vals, ", "), more)
end

local summary_cols = {"mean", "sd", "min", "q1", "median", "q3", "max"}

-- tostring(f:summary()): one line per column, its type in the words of
-- c.type.
function F.summary_text(s)
  local rows = {{"column", "type", "n", "missing", "levels", table.unpack(summary_cols)}}
  local right = {false, false, true, true, true, true, true, true, true, true, true, true}
  for _, r in ipairs(s) do
    local line = {r.column, r.type or "", tostring(r.n), tostring(r.missing),
                  r.levels and tostring(r.levels) or ""}
    for _, k in ipairs(summary_cols) do line[#line + 1] = num4(r[k]) end
    rows[#rows + 1] = line
  end
  return table.concat(F.align(rows, right), "\n")
end

function F.install(M, metas, hooks)
  hooks.frame_text = F.frame_text
  hooks.column_text = F.column_text
  hooks.summary_text = F.summary_text
  hooks.warn = function(msg) io.stderr:write("warning: ", msg, "\n") end
end

return F
