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

-- A cell as shown in a frame: numbers in up to 6 significant digits,
-- missing as NA, texts with line breaks escaped.
local function cell(v)
  if v == nil or v == false then return "NA" end
  if type(v) == "number" then
    if v == math.floor(v) and math.abs(v) < 1e15 then return string.format("%d", v) end
    return string.format("%.6g", v)
  end
  return cut((v:gsub("\n", "\\n"):gsub("\r", "\\r")), F.max_width)
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

-- tostring(f): names, types and the first rows.
function F.frame_text(f)
  local names = f:names()
  local head = {"", table.unpack(names)}
  local types, right = {""}, {true}
  local cols = {}
  for j, name in ipairs(names) do
    local c = f:column(name)
    cols[j] = c
    types[j + 1] = c.type == "number" and "<num>" or "<cat>"
    right[j + 1] = c.type == "number"
  end
  local rows = {head, types}
  local shown = math.min(#f, F.max_rows)
  for i = 1, shown do
    local r = {tostring(i)}
    for j, c in ipairs(cols) do r[j + 1] = cell(c[i]) end
    rows[#rows + 1] = r
  end
  local lines = F.align(rows, right)
  if #f > shown then
    lines[#lines + 1] = string.format("... %d more rows", #f - shown)
  end
  lines[#lines + 1] = string.format("(%d rows, %d columns)", #f, #names)
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

-- tostring(f:summary()): one line per column.
function F.summary_text(s)
  local rows = {{"column", "n", "missing", "levels", table.unpack(summary_cols)}}
  local right = {false, true, true, true, true, true, true, true, true, true, true}
  for _, r in ipairs(s) do
    local line = {r.column, tostring(r.n), tostring(r.missing),
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
