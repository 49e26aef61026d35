-- sluice.chunks: the top level of a piece of Lua, read as text.  Which
-- locals an input declares at its top level (so that the session can keep
-- them for the next input), where its top-level return stands, and how a
-- script divides into top-level statements, one entry each, the way the
-- prompt divides what is typed into inputs.  Pure text: nothing here runs
-- the code it reads.
local K = {}

local find, match, sub, byte = string.find, string.match, string.sub, string.byte

local KEYWORDS = {}
for w in ([[and break do else elseif end false for function goto if in local
            nil not or repeat return then true until while]]):gmatch("%a+") do
  KEYWORDS[w] = true
end

-- Keywords that open a block closed by "end" or "until" ("while" and
-- "for" open theirs with "do").
local OPENS = {["do"] = true, ["if"] = true, ["function"] = true, ["repeat"] = true}
local CLOSES = {["end"] = true, ["until"] = true}

-- The position after the long bracket's close "]==]" of level eq, from i.
local function long_end(s, eq, i)
  local _, e = find(s, "]" .. eq .. "]", i, true)
  return (e or #s) + 1
end

-- The tokens of s: kinds ("name", "kw", "op", "str", "num"), texts (names,
-- keywords, operators) and byte positions.  Strings, numbers and comments
-- are followed only far enough to skip them.
function K.lex(s)
  local kind, text, pos = {}, {}, {}
  local i, n = 1, #s
  local function add(k, t, p)
    local m = #kind + 1
    kind[m], text[m], pos[m] = k, t, p
  end
  while i <= n do
    local c = sub(s, i, i)
    if find(c, "^%s") then
      i = find(s, "%S", i) or n + 1
    elseif c == "-" and sub(s, i + 1, i + 1) == "-" then
      local eq = match(s, "^%[(=*)%[", i + 2)
      if eq then i = long_end(s, eq, i + 4 + #eq)
      else i = (find(s, "\n", i, true) or n) + 1 end
    elseif c == "[" and match(s, "^%[=*%[", i) then
      local eq = match(s, "^%[(=*)%[", i)
      add("str", nil, i)
      i = long_end(s, eq, i + 2 + #eq)
    elseif c == '"' or c == "'" then
      local j = i + 1
      while j <= n do
        local d = sub(s, j, j)
        if d == "\\" then j = j + 2
        elseif d == c or d == "\n" then break
        else j = j + 1 end
      end
      add("str", nil, i)
      i = j + 1
    elseif find(c, "^[%a_]") then
      local w = match(s, "^[%w_]+", i)
      add(KEYWORDS[w] and "kw" or "name", w, i)
      i = i + #w
    elseif find(c, "^%d") or (c == "." and find(s, "^%d", i + 1)) then
      local j = i
      repeat   -- digits, letters, dots, and a sign after an exponent mark
        j = (find(s, "[^%w_.]", j) or n + 1)
        local sign = find(s, "^[eEpP][+-]", j - 1)
        if sign then j = j + 1 end
      until not sign
      add("num", nil, i)
      i = j
    elseif c == ":" and sub(s, i + 1, i + 1) == ":" then
      add("op", "::", i)
      i = i + 2
    else
      add("op", c, i)
      i = i + 1
    end
  end
  return kind, text, pos
end

-- The top level of code: {locals = {{name=, attrib=}, in order}, names =
-- {set of every name the code mentions}, ret = position of a top-level
-- "return" or nil}.  "local function f" declares f; "local a <const>, b"
-- declares a (attrib "const") and b.
function K.scan(code)
  local kind, text, pos = K.lex(code)
  local depth, locals, names, ret = 0, {}, {}, nil
  for i = 1, #kind do
    local k, w = kind[i], text[i]
    if k == "name" then
      names[w] = true
    elseif k == "kw" then
      if depth == 0 and w == "local" then
        if text[i + 1] == "function" and kind[i + 1] == "kw" then
          if kind[i + 2] == "name" then locals[#locals + 1] = {name = text[i + 2]} end
        else
          local j = i + 1
          while kind[j] == "name" do
            local d = {name = text[j]}
            j = j + 1
            if text[j] == "<" and kind[j + 1] == "name" and text[j + 2] == ">" then
              d.attrib = text[j + 1]
              j = j + 3
            end
            locals[#locals + 1] = d
            if not (kind[j] == "op" and text[j] == ",") then break end
            j = j + 1
          end
        end
      elseif OPENS[w] then depth = depth + 1
      elseif CLOSES[w] then depth = depth - 1
      elseif depth == 0 and w == "return" then ret = ret or pos[i]
      end
    end
  end
  return {locals = locals, names = names, ret = ret}
end

-- Can a token begin a statement?  "(" cannot begin an entry: after a
-- complete statement Lua reads it as a call of what came before.
local STARTS = {["local"] = true, ["function"] = true, ["if"] = true, ["while"] = true,
                ["for"] = true, ["repeat"] = true, ["do"] = true, ["return"] = true,
                ["break"] = true, ["goto"] = true}
local function starts_statement(k, w)
  return k == nil or k == "name" or (k == "kw" and STARTS[w])
         or (k == "op" and (w == "::" or w == ";"))
end

-- The number of the line at each token, from the byte positions.
local function token_lines(s, pos)
  local lines, line, at = {}, 1, 1
  for t = 1, #pos do
    while true do
      local nl = find(s, "\n", at, true)
      if not nl or nl >= pos[t] then break end
      line, at = line + 1, nl + 1
    end
    lines[t] = line
  end
  return lines
end

-- Does an entry declare a to-be-closed local at its top level?  It must
-- keep the rest of the script with it, to close where the script ends.
local function declares_close(code)
  for _, d in ipairs(K.scan(code).locals) do
    if d.attrib == "close" then return true end
  end
  return false
end

-- The text of a script divided into top-level statements, the way the
-- prompt divides typed lines into inputs: an entry ends at the first line
-- after which its text compiles and the next line (past blanks and
-- comments) begins a statement.  Comment lines go with the statement
-- below them; blank lines between entries and trailing comments are
-- dropped.  A statement with a goto to a label in an earlier entry joins
-- that entry; one that declares a <close> local takes the rest of the
-- script with it, to be closed where the script ends.  The text must
-- compile as a whole.  Returns a list of {code=, line= (its first line)}.
function K.split(text, load)
  local lines = {}
  for l in (text .. "\n"):gmatch("(.-)\n") do lines[#lines + 1] = l end
  if text:sub(-1) == "\n" then lines[#lines] = nil end
  local n = #lines
  local kind, words, pos = K.lex(text)
  local tline = token_lines(text, pos)
  local first_tok = {}          -- the first token on or after each line
  local t = #kind + 1
  for l = #lines + 1, 1, -1 do
    while t > 1 and tline[t - 1] >= l do t = t - 1 end
    first_tok[l] = t
  end
  local function next_starts(l)  -- does the first token from line l begin a statement?
    local k = first_tok[l] or #kind + 1
    return starts_statement(kind[k], words[k])
  end
  -- open[l]: is a block or bracket open at the end of line l?  Only where
  -- none is can an entry end, so a long table costs one compile, not one
  -- per line.
  local open, depth, t2 = {}, 0, 1
  for l = 1, n do
    while t2 <= #kind and tline[t2] <= l do
      local k, w = kind[t2], words[t2]
      if (k == "kw" and OPENS[w]) or (k == "op" and (w == "(" or w == "{" or w == "[")) then
        depth = depth + 1
      elseif (k == "kw" and CLOSES[w]) or (k == "op" and (w == ")" or w == "}" or w == "]")) then
        depth = depth - 1
      end
      t2 = t2 + 1
    end
    open[l] = depth > 0
  end
  -- The entry from line i that ends at the first line j >= from after
  -- which it compiles and a statement begins: j and its code, or nil.
  local function take(i, from)
    local code_at = tline[first_tok[i]]   -- the entry's first line of code
    for j = math.max(from, code_at), n do
      if not open[j] and next_starts(j + 1) then
        local c = table.concat(lines, "\n", i, j)
        if load(c) then return j, c end
      end
    end
  end
  local entries, i = {}, 1
  while i <= n do
    while i <= n and find(lines[i], "^%s*$") do i = i + 1 end
    if i > n or first_tok[i] > #kind then break end   -- only comments remain
    local start = i
    local j, code = take(start, i)
    while not j do   -- a goto to a label in an entry before: join that entry
      local prev = table.remove(entries)
      if not prev then return {{code = table.concat(lines, "\n"), line = 1}} end
      start = prev.line
      j, code = take(start, i)
    end
    if j < n and declares_close(code) then
      j = n
      code = table.concat(lines, "\n", start, n)
    end
    entries[#entries + 1] = {code = code, line = start}
    i = j + 1
  end
  return entries
end

-- Does the text begin like a session log ("--@ sluice VERSION session
-- log", after a UTF-8 byte order mark)?
function K.is_log(text)
  if sub(text, 1, 3) == "\239\187\191" then text = sub(text, 4) end
  return find(text, "^%-%-@ sluice %S+ session log\r?\n") ~= nil
end

return K
