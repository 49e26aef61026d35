-- sluice.logtext: the text of the session log.  Writing an entry, making
-- recorded text inert, and reading a log back in one linear pass.
--
-- A log is a Lua script that `sluice LOG` can run:
--
--   --@ sluice 0.1.0 session log          header: three "--@ " lines
--   --@ started 2026-01-01T00:00:00Z
--   --@ lua 5.4
--   --@ in 1 (1 line)                     an entry: its marker says how many
--   trees = read_csv "orchard.csv"        lines of code follow, written verbatim
--   --@ data orchard.csv 177 0a1b...      then metadata: data read, pictures,
--   --@ in 2 show (1 line)                and "--| " lines of printed output
--   show(#trees)
--   --| 8
--   --@ in 3 skipped (1 line): does not compile
--   --> x = = 1                           a skipped input, commented out
--   --| error: [input 3]:1: unexpected symbol near '='
--   --@ in 4 show (1 line)
--   show(log())
--   --| sluice-logs/session-20260101-000000.lua
--   --@ volatile 1                        output line 1 is sluice's own and
--                                         changes between runs (the log's path)
--   --@ in 5 (1 line)                     an entry of a script ends with the
--   local area = 6 * 7                    chunk name and line its code had in
--   --@ at @orchard.lua 12                the script; replay runs it so (the
--                                         name and line only label messages)
--
-- The line count makes entry boundaries unforgeable: typed text (a long
-- string holding "--@ in 99", say) is code, whatever it looks like.  Every
-- other line is written by sluice and passed through T.escape, so it holds
-- no byte at which Lua would end a comment.  Logs written before the count
-- (markers "--@ in N", "--@ in N show", "--@ in N skipped: REASON") are read
-- by the older rule: an entry runs to the next marker, and its metadata is
-- the run of "--|" and "--@ " lines at its end.
--
-- The parser refuses what would make `sluice LOG` run something that replay
-- never sees: a line outside every entry that is not blank or a short
-- comment, a long comment there, a carriage return inside any comment line
-- (Lua ends a comment at CR as at LF), and a line of a skipped entry that
-- is not a "-->" comment.
local T = {}

local byte, char, find, format = string.byte, string.char, string.find, string.format
local gsub, match, sub = string.gsub, string.match, string.sub
local concat, move = table.concat, table.move

-- Entry numbers, line counts and byte sizes longer than this many digits
-- are refused (they would not be exact integers).
T.MAX_DIGITS = 15
T.MAX_LINES = 4000000   -- lines of a log (the parser keeps each as a string)
T.MAX_VERSION = 32      -- characters of a version in a header line
T.MAX_CHUNK = 4096      -- bytes of the chunk name of a '--@ at' line
T.MAX_AT_LINE = 10000000  -- line of a '--@ at' line (replay puts that many
                          -- newlines before the entry's code)

-- ---- escaping ----

-- Names of the control bytes; the others are written \xHH.
local NAMED = {[0] = "\\0", [7] = "\\a", [8] = "\\b", [10] = "\\n", [11] = "\\v",
               [12] = "\\f", [13] = "\\r", [27] = "\\e"}
local CONTROL = {}
for b = 0, 31 do
  if b ~= 9 then CONTROL[char(b)] = NAMED[b] or format("\\x%02x", b) end
end
CONTROL["\127"] = "\\x7f"

local CONTROL_CLASS = "[\0-\8\10-\31\127]"
local SUSPECT = "[\0-\8\10-\31\127-\255]"   -- anything that may need work

-- Code points that are controls (C1) or reorder or break displayed text:
-- U+0080-U+009F, U+061C, U+200E-U+200F, U+2028-U+202E, U+2066-U+2069.
local UNICODE = {"\194[\128-\159]", "\216\156", "\226\128[\142\143\168-\174]",
                 "\226\129[\166-\169]"}

local function code_point(s) return format("\\u{%x}", utf8.codepoint(s)) end

-- Each byte that is not part of valid UTF-8 as \xHH (utf8.len is strict:
-- overlong forms, surrogates and values past U+10FFFF are invalid).
local function fix_utf8(s)
  if not find(s, "[\128-\255]") then return s end
  local out, i, n = {}, 1, #s
  while i <= n do
    local ok, bad = utf8.len(s, i)
    if ok then out[#out + 1] = sub(s, i); break end
    out[#out + 1] = sub(s, i, bad - 1)
    out[#out + 1] = format("\\x%02x", byte(s, bad))
    i = bad + 1
  end
  s = concat(out)
  for _, p in ipairs(UNICODE) do s = gsub(s, p, code_point) end
  return s
end

-- s with every control character made visible and inert, so that a line
-- "--| " .. T.escape(s) stays one Lua comment and prints harmlessly:
--   \0 \a \b \n \v \f \r \e for those bytes, \xHH for the other bytes below
--   0x20 (TAB is kept) and for DEL; \xHH for each byte that is not valid
--   UTF-8; \u{H} for the C1 controls U+0080-U+009F and the marks that
--   reorder or break lines (U+061C, U+200E, U+200F, U+2028-U+202E,
--   U+2066-U+2069).
-- Backslashes are kept, so it is not reversible, but it is idempotent:
-- T.escape(T.escape(s)) == T.escape(s).  Replay compares T.escape(line)
-- with the recorded line.
function T.escape(s)
  if not find(s, SUSPECT) then return s end
  return fix_utf8((gsub(s, CONTROL_CLASS, CONTROL)))
end

-- ---- writing ----

-- Is code a query of the log's own path: log(), show(log()) or print(log())?
-- Its output is the path of whatever log is open, which differs between runs.
function T.is_log_query(code)
  if type(code) ~= "string" then return false end
  local inner = match(code, "^%s*show%s*(%b())%s*;?%s*$")
                or match(code, "^%s*print%s*(%b())%s*;?%s*$")
  if inner then code = sub(inner, 2, -2) end
  return find(code, "^%s*log%s*%(%s*%)%s*;?%s*$") ~= nil
end

-- The volatile output lines of e, sorted: those it marks (e.volatile, a
-- set of line numbers), and the one line of a query of the log's path.
function T.volatile_lines(e)
  local list = {}
  for i in pairs(e.volatile or {}) do
    if math.type(i) == "integer" and i >= 1 and i <= #(e.out or {}) then list[#list + 1] = i end
  end
  if #list == 0 and not e.skip and #(e.out or {}) == 1 and T.is_log_query(e.code) then
    list[1] = 1
  end
  table.sort(list)
  return list
end

-- The three header lines of a session.
function T.header_lines(version, started)
  return {"--@ sluice " .. T.escape(version) .. " session log",
          "--@ started " .. T.escape(started), "--@ " .. _VERSION:lower()}
end

-- The code written for a typed expression: show(...) around it (on a line
-- of its own after a comment or a newline, which would swallow the ")").
function T.show_code(typed)
  if find(typed, "\n", 1, true) or find(typed, "--", 1, true) then
    return "show(" .. typed .. "\n)"
  end
  return "show(" .. typed .. ")"
end

local function count_lines(s) return select(2, gsub(s, "\n", "")) + 1 end

local function lines_word(k) return k == 1 and "1 line" or k .. " lines" end

-- The text of one entry: e = {n=, typed=, expr=, skip=, code=, out = {lines},
-- data = {{path=, bytes=, sha256=}}, pictures = {paths}, volatile = {[line]
-- = true}, at = {chunk=, line=}}.  The output of a query of the log's path is
-- marked volatile; the place of a script's entry (at) is its last line.
function T.entry_text(e)
  local out = {}
  if e.skip then
    for l in (e.typed .. "\n"):gmatch("(.-)\n") do out[#out + 1] = "--> " .. T.escape(l) end
    table.insert(out, 1, format("--@ in %d skipped (%s): %s", e.n, lines_word(#out),
                                T.escape(e.skip)))
  else
    -- a statement that opens with "(" would continue the entry before it
    -- when the log runs as one script: x = a <entry> (g)() is x = a(g)()
    local code = find(e.code, "^%s*%(") and ";" .. e.code or e.code
    out[1] = format("--@ in %d%s (%s)", e.n, e.expr and " show" or "",
                    lines_word(count_lines(code)))
    out[2] = code
  end
  for _, l in ipairs(e.out or {}) do
    out[#out + 1] = l == "" and "--|" or "--| " .. T.escape(l)
  end
  for _, i in ipairs(T.volatile_lines(e)) do out[#out + 1] = "--@ volatile " .. i end
  for _, d in ipairs(e.data or {}) do
    out[#out + 1] = format("--@ data %s %d %s", T.escape(d.path), d.bytes, T.escape(d.sha256))
  end
  for _, p in ipairs(e.pictures or {}) do out[#out + 1] = "--@ picture " .. T.escape(p) end
  if e.at and not e.skip then
    out[#out + 1] = format("--@ at %s %d", T.escape(e.at.chunk), e.at.line)
  end
  return concat(out, "\n") .. "\n"
end

-- ---- reading ----

function T.version_newer(a, b)   -- is version a newer than b?
  local function parts(v)
    local t = {}
    for d in v:gmatch("%d+") do t[#t + 1] = tonumber(d) end
    return t
  end
  local x, y = parts(a), parts(b)
  for i = 1, math.max(#x, #y) do
    local p, q = x[i] or 0, y[i] or 0
    if p ~= q then return p > q end
  end
  return false
end

-- A whole number written with at most MAX_DIGITS digits, or nil.
local function number(digits)
  if #digits > T.MAX_DIGITS then return nil end
  return math.tointeger(tonumber(digits))
end

-- The lines of text (split at LF only, as the writer wrote them), and the
-- unterminated last line if any.  A plain find per line keeps this linear.
local function split(text)
  local lines, pos, len = {}, 1, #text
  while true do
    local nl = find(text, "\n", pos, true)
    if not nl then break end
    if #lines >= T.MAX_LINES then return nil end
    lines[#lines + 1] = sub(text, pos, nl - 1)
    pos = nl + 1
  end
  if pos <= len then lines[#lines + 1] = sub(text, pos) return lines, true end
  return lines, false
end

local function is_marker(l) return find(l, "^%-%-@ in %d") ~= nil end
local function session_line(l) return match(l, "^%-%-@ sluice (%S+) session log$") end
local function header_rest(l) return find(l, "^%-%-@ started ") or find(l, "^%-%-@ lua ") end
local function is_meta(l) return sub(l, 1, 3) == "--|" or sub(l, 1, 4) == "--@ " end

local CR_MSG = "a carriage return inside a comment line (Lua would end the comment "
               .. "there and run the rest)"

-- Why a line outside every entry is refused, or nil: such a line must stay
-- inert for Lua, or running the log would run what replay never checks.
local function not_inert(l)
  if find(l, "^%s*$") then return nil end
  if sub(l, 1, 2) ~= "--" then
    return "a line outside every entry that is not a comment (an entry's marker "
           .. "'--@ in N (K lines)' counts its lines of code)"
  end
  if find(l, "^%-%-%[=*%[") then return "a long comment outside every entry" end
  if find(l, "\r", 1, true) then return CR_MSG end
end

-- Record one metadata line of e; returns a message if it is refused.
local function add_meta(e, l)
  if find(l, "\r", 1, true) then return CR_MSG end
  if sub(l, 1, 3) == "--|" then
    local o = sub(l, 4)
    if byte(o, 1) == 32 then o = sub(o, 2) end
    e.out[#e.out + 1] = T.escape(o)
    return nil
  end
  local p, b, h = match(l, "^%-%-@ data (.+) (%d+) (%x+)$")
  if p then
    local bytes = number(b)
    if not bytes then return "the size of a data file has more than " .. T.MAX_DIGITS .. " digits" end
    e.data[#e.data + 1] = {path = T.escape(p), bytes = bytes, sha256 = h}
    return nil
  end
  local pic = match(l, "^%-%-@ picture (.+)$")
  if pic then e.pictures[#e.pictures + 1] = T.escape(pic) return nil end
  local chunk, at = match(l, "^%-%-@ at ([=@][^\0]*) (%d+)$")
  if chunk then
    local k = number(at)
    if not k or k < 1 or k > T.MAX_AT_LINE then
      return format("the line of '--@ at' is not a whole number from 1 to %d", T.MAX_AT_LINE)
    end
    if #chunk > T.MAX_CHUNK then
      return format("the chunk name of '--@ at' is longer than %d bytes", T.MAX_CHUNK)
    end
    if e.at then return "a second '--@ at' line in one entry" end
    e.at = {chunk = T.escape(chunk), line = k}
    return nil
  end
  if find(l, "^%-%-@ at ") then
    return "a '--@ at' line that is not '--@ at CHUNKNAME LINE' (CHUNKNAME beginning with '@' or '=')"
  end
  local v = match(l, "^%-%-@ volatile (%d+)$")
  if v then
    local k = number(v)
    if not k then return "a volatile line number with more than " .. T.MAX_DIGITS .. " digits" end
    e.volatile[k] = true
  end
  return nil   -- another "--@ " line: metadata of a later version, ignored
end

-- typed and code of e from its lines of code; code[k] is line at[k] of the
-- log, or first + k - 1.  Returns the line and message of a refusal.
local function finish_entry(e, code, first, at)
  e.code = concat(code, "\n")
  -- as T.entry_text writes it: a statement opening with "(" gets a ";", so
  -- that an entry read from an older log is written back the same way
  if not e.skip and find(e.code, "^%s*%(") then e.code = ";" .. e.code end
  if e.skip then
    local typed = {}
    for k, l in ipairs(code) do
      local where = at and at[k] or first + k - 1
      if sub(l, 1, 3) ~= "-->" then
        return where, format("line %d of skipped entry %d is not a '--> ' comment "
                                     .. "(it would run when the log runs)", k, e.n)
      end
      if find(l, "\r", 1, true) then return where, CR_MSG end
      typed[k] = T.escape(match(l, "^%-%-> ?(.*)$"))
    end
    e.typed = concat(typed, "\n")
  elseif e.expr then
    e.typed = match(e.code, "^show%((.*)\n%)$") or match(e.code, "^show%((.*)%)$") or e.code
  else
    e.typed = e.code
  end
end

-- The kind and line count of a counted marker's rest, or nil (an older marker).
local function counted(rest)
  local k = match(rest, "^ %((%d+) lines?%)$")
  if k then return "code", k end
  k = match(rest, "^ show %((%d+) lines?%)$")
  if k then return "show", k end
  local reason
  k, reason = match(rest, "^ skipped %((%d+) lines?%): (.*)$")
  if k then return "skip", k, reason end
end

-- Parse the text of a log (name is used in messages):
--   {head = {lines}, version = "0.1.0", entries = {...}, truncated = bool, crlf = bool}
-- or nil and "NAME:LINE: message".  Each entry is {n=, line= (of its marker),
-- new_session= (true when a later session's header precedes it), expr=,
-- skip=, code=, typed=, out = {lines, escaped}, data = {{path=, bytes=,
-- sha256=}}, pictures = {paths}, volatile = {[line] = true}, at = {chunk=,
-- line=} (a script's entry: its chunk name and first line)}.  A log saved
-- with CRLF line ends (its first line ends in CR LF) has one CR removed
-- before each LF; a UTF-8 byte order mark at the start is skipped.
-- truncated: the last line has no newline, or the last entry has fewer
-- lines of code than its marker says.  One pass, linear in the size of the
-- text.
function T.parse(text, name)
  name = name or "log"
  if type(text) ~= "string" then
    error("parse: text = a string expected, got " .. type(text), 2)
  end
  local function fail(line, msg) return nil, format("%s:%d: %s", name, line, msg) end
  if sub(text, 1, 3) == "\239\187\191" then text = sub(text, 4) end
  local nl = find(text, "\n", 1, true)
  local crlf = nl ~= nil and nl > 1 and byte(text, nl - 1) == 13
  if crlf then text = gsub(text, "\r\n", "\n") end
  local lines, truncated = split(text)
  if not lines then return fail(T.MAX_LINES, "more than " .. T.MAX_LINES .. " lines") end
  local version = session_line(lines[1] or "")
  if version and #version > T.MAX_VERSION then
    return fail(1, "a version of more than " .. T.MAX_VERSION .. " characters")
  end
  if not version then
    return fail(1, "not a sluice session log (the first line should be "
                   .. "'--@ sluice VERSION session log')")
  end
  local res = {head = {lines[1]}, version = version, entries = {}, crlf = crlf}
  local n_lines, j = #lines, 2
  while j <= n_lines and not is_marker(lines[j]) do
    local why = not_inert(lines[j])
    if why then return fail(j, why) end
    res.head[#res.head + 1] = lines[j]
    j = j + 1
  end
  local fresh = false        -- a later session's header was seen
  -- Is l a header line of a later session?  And a refusal, if any.
  local function session(l)
    local again = session_line(l)
    if again and #again > T.MAX_VERSION then return true, "a version of more than "
                                                  .. T.MAX_VERSION .. " characters" end
    if again then
      if T.version_newer(again, res.version) then res.version = again end
      fresh = true
      return true
    end
    if not header_rest(l) then return false end
    if find(l, "\r", 1, true) then return true, CR_MSG end
    return true
  end
  while j <= n_lines do     -- lines[j] is a marker
    local digits, rest = match(lines[j], "^%-%-@ in (%d+)(.*)$")
    local e = {n = number(digits), line = j, new_session = fresh or nil,
               out = {}, data = {}, pictures = {}, volatile = {}}
    if find(rest, "\r", 1, true) then return fail(j, CR_MSG) end
    if not e.n then return fail(j, "an entry number with more than " .. T.MAX_DIGITS .. " digits") end
    fresh = false
    local kind, k, reason = counted(rest)
    local code, first, at = {}, j + 1, nil
    if kind then
      k = number(k)
      if not k then return fail(j, "a line count with more than " .. T.MAX_DIGITS .. " digits") end
      e.expr = kind == "show"
      if kind == "skip" then e.skip = T.escape(reason) end
      local last = j + k
      if last > n_lines then truncated, last = true, n_lines end
      move(lines, first, last, 1, code)
      j = last + 1
      local seen_header = false
      while j <= n_lines and not is_marker(lines[j]) do
        local l, header, why = lines[j], false, nil
        if sub(l, 1, 3) ~= "--|" then header, why = session(l) end
        if why then return fail(j, why) end
        if header then seen_header = true
        elseif not is_meta(l) then why = not_inert(l)
        elseif seen_header then
          why = "an output or metadata line after a session header, outside every entry"
        else why = add_meta(e, l) end
        if why then return fail(j, why) end
        j = j + 1
      end
    else    -- an older marker: the entry runs to the next marker
      e.expr = rest == " show"
      e.skip = match(rest, "^ skipped: (.*)$")
      if e.skip then e.skip = T.escape(e.skip) end
      at = {}
      j = j + 1
      local header_at = nil   -- the first header line seen in this entry
      while j <= n_lines and not is_marker(lines[j]) do
        local l = lines[j]
        local header, why = session(l)
        if why then return fail(j, why) end
        if not header then
          -- a later session's header closes an entry: code after it could be
          -- inside a long string for Lua, so the header would be code too
          if header_at and not find(l, "^%s*$") then
            return fail(header_at, "a session header line inside an entry (only a later "
                                   .. "session's header may follow an entry, before its marker)")
          end
          local c = #code + 1
          code[c], at[c] = l, j
          fresh = false
        else
          header_at = header_at or j
        end
        j = j + 1
      end
      local m = #code
      while m >= 1 and is_meta(code[m]) do m = m - 1 end
      for i = m + 1, #code do
        local why = add_meta(e, code[i])
        if why then return fail(at[i], why) end
        code[i] = nil
      end
    end
    local bad_at, why = finish_entry(e, code, first, at)
    if why then return fail(bad_at, why) end
    res.entries[#res.entries + 1] = e
  end
  res.truncated = truncated
  return res
end

return T
