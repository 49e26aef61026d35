-- sluice.print: how results look.  format(v) gives the text the shell shows
-- for a value; install() gives sluice's lists and edges their __tostring.
local P = {}

local bare = "^[%w_.\128-\255]+$"
local write_name      -- sluice._name, set by install: the C writer's rules

-- A node name as the graph notation writes it (quoted, with invisible
-- characters as \u{XXXX}, when it cannot stand bare).
function P.name(s)
  if write_name and not s:find("\0", 1, true) then return write_name(s) end
  if s:match(bare) and s ~= "hidden" then return s end
  return '"' .. s:gsub('[\\"]', "\\%0") .. '"'
end

local function is_list(t)
  local n = #t
  for k in pairs(t) do
    if math.type(k) ~= "integer" or k < 1 or k > n then return false end
  end
  return true
end

local function scalar(v)
  local t = type(v)
  if t == "string" then return string.format("%q", v):gsub("\\\n", "\\n") end
  if t == "number" then
    if math.type(v) == "float" and v == math.floor(v) and math.abs(v) < 1e15 then
      return string.format("%.1f", v)
    end
    return tostring(v)
  end
  return tostring(v)
end

local format_value

-- A plain table: a list on one line when short, else one entry per line.
local function format_table(t, indent, seen)
  if seen[t] then return "<cycle>" end
  seen[t] = true
  local pad = string.rep("  ", indent + 1)
  local parts, long = {}, false
  if is_list(t) then
    for i = 1, #t do
      parts[i] = format_value(t[i], indent + 1, seen)
    end
  else
    local keys = {}
    for k in pairs(t) do keys[#keys + 1] = k end
    table.sort(keys, function(a, b)
      local ta, tb = type(a), type(b)
      if ta ~= tb then return ta < tb end
      if ta == "number" or ta == "string" then return a < b end
      return tostring(a) < tostring(b)
    end)
    for _, k in ipairs(keys) do
      local key = type(k) == "string" and k:match("^[%a_][%w_]*$") and k
                  or "[" .. scalar(k) .. "]"
      parts[#parts + 1] = key .. " = " .. format_value(t[k], indent + 1, seen)
    end
  end
  seen[t] = nil
  if #parts == 0 then return "{}" end
  local width = 0
  for _, p in ipairs(parts) do
    width = width + #p + 2
    if p:find("\n") then long = true end
  end
  if not long and width + indent * 2 < 72 then
    return "{" .. table.concat(parts, ", ") .. "}"
  end
  return "{\n" .. pad .. table.concat(parts, ",\n" .. pad) .. "\n" ..
         string.rep("  ", indent) .. "}"
end

function format_value(v, indent, seen)
  local mt = getmetatable(v)
  if type(mt) == "table" and mt.__tostring then return tostring(v) end
  if type(v) == "table" then return format_table(v, indent or 0, seen or {}) end
  return scalar(v)
end

-- The text the shell prints for a value: strings as they are.
function P.format(v)
  if type(v) == "string" then return v end
  return format_value(v, 0, {})
end

-- A list of names on one line when short, else one per line; others one
-- item per line.
local function list_tostring(l)
  if #l == 0 then return "(none)" end
  local parts, width, allnames = {}, 0, true
  for i = 1, #l do
    local v = l[i]
    if type(v) == "string" then parts[i] = P.name(v)
    else allnames = false; parts[i] = format_value(v, 1, {}) end
    width = width + #parts[i] + 2
  end
  if allnames and width < 76 then return table.concat(parts, ", ") end
  return table.concat(parts, "\n")
end

local function edge_tostring(e)
  return P.name(e.from) .. " " .. e.kind .. " " .. P.name(e.to)
end

function P.install(M, metas)
  local list_mt, edge_mt = metas.list, metas.edge
  list_mt.__tostring = list_tostring
  list_mt.__name = "sluice.list"
  edge_mt.__tostring = edge_tostring
  edge_mt.__name = "sluice.edge"
  M._format = P.format
  write_name = M._name
end

return P
