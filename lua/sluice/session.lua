-- sluice.session: the session log, its replay and sandbox, report() and
-- exercise().  The log is a Lua script: each top-level input as typed
-- (an expression wrapped in show(...), so that the script prints what the
-- prompt printed), then what it printed as "--| " lines and metadata as
-- "--@ " lines.  The shell calls the hooks session_begin, session_out,
-- session_end and session_skip around every input, and gives the C
-- services fsync, mkdir, realpath and markdown_html through the hooks.
local S = {}

local M, hooks            -- the module and the hooks table, set by install
local P = require "sluice.print"
-- kept now: a replay child hides the debug library before the log runs
local getinfo, registry = debug.getinfo, debug.getregistry()
local getupvalue, upvaluejoin = debug.getupvalue, debug.upvaluejoin
local T = require "sluice.logtext"
local K = require "sluice.chunks"

local stdout = io.stdout
local file_methods = getmetatable(io.stdout).__index
local real = {
  print = print, write = io.write, fwrite = file_methods.write,
  open = io.open, output = io.output, lines = io.lines,
  remove = os.remove, rename = os.rename, load = load, loadfile = loadfile,
}

S.entries = {}            -- the entries of this session, in order
S.started = nil           -- ISO-8601 UTC time the session began
local log = nil           -- {path=, file=} while the log is on
local running_log = nil   -- the real path of a log that runs as a script
local cap = nil           -- list of texts written while an input runs
local echo = true         -- captured output also goes to the terminal
local current = nil       -- the entry being run: {data=, pictures=}

-- ---- capture ----

-- Text of a value as io.write writes it (numbers with LUA_NUMBER_FMT).
local function write_text(v, i)
  local t = type(v)
  if t == "string" then return v end
  if t == "number" then
    return math.type(v) == "float" and string.format("%.14g", v) or tostring(v)
  end
  error(string.format("bad argument #%d to 'write' (string expected, got %s)", i, t), 3)
end

local function cap_print(...)
  if not cap then return real.print(...) end
  local n, t = select("#", ...), {}
  for i = 1, n do t[i] = tostring((select(i, ...))) end
  local s = table.concat(t, "\t") .. "\n"
  cap[#cap + 1] = s
  if echo then real.fwrite(stdout, s); stdout:flush() end
end

local function cap_write(...)
  if not cap or real.output() ~= stdout then return real.write(...) end
  local n, t = select("#", ...), {}
  for i = 1, n do t[i] = write_text((select(i, ...)), i) end
  local s = table.concat(t)
  cap[#cap + 1] = s
  if echo then return real.fwrite(stdout, s) end
  return stdout
end

local function cap_fwrite(f, ...)
  if not cap or not rawequal(f, stdout) then return real.fwrite(f, ...) end
  local n, t = select("#", ...), {}
  for i = 1, n do t[i] = write_text((select(i, ...)), i) end
  local s = table.concat(t)
  cap[#cap + 1] = s
  if echo then return real.fwrite(f, s) end
  return f
end

local wrapped = false
-- Route print, io.write and io.stdout:write through the capture (once).
local function wrap_output()
  if wrapped then return end
  wrapped = true
  _G.print = cap_print
  io.write = cap_write
  file_methods.write = cap_fwrite
end

-- Lines of the captured text ("a\nb\n" and "a\nb" are both {"a", "b"}).
local function lines_of(text)
  local out = {}
  if text == "" then return out end
  if text:sub(-1) ~= "\n" then text = text .. "\n" end
  for l in text:gmatch("(.-)\n") do out[#out + 1] = l end
  return out
end

-- The message of an error object, as the prompt shows it: a misspelled
-- function name gains the closest one of globals (default: the global
-- table) through the shell's hook, as at the prompt.
local function error_text(e, globals)
  local s
  if type(e) == "string" or type(e) == "number" then s = tostring(e)
  else
    local mt = getmetatable(e)
    if type(mt) == "table" and mt.__tostring then
      local ok, t = pcall(tostring, e)
      if ok and type(t) == "string" then s = t end
    end
    s = s or "(error object is a " .. type(e) .. " value)"
  end
  if hooks and hooks.suggest_global then
    local ok, t = pcall(hooks.suggest_global, s, globals)
    if ok and type(t) == "string" then s = t end
  end
  return s
end

-- ---- the log's text (sluice.logtext) ----

local header_lines, entry_text, show_code = T.header_lines, T.entry_text, T.show_code

-- Append text to the log and make it durable.
local function log_append(text)
  if not log then return end
  local ok, err = log.file:write(text)
  if ok then ok, err = log.file:flush() end
  if ok and hooks.fsync then ok, err = hooks.fsync(log.file) end
  if not ok then
    io.stderr:write("warning: the session log ", log.path, " could not be written (",
                    tostring(err), "); logging stops\n")
    pcall(log.file.close, log.file)
    log = nil
  end
end

-- ---- the session, driven by the shell ----

local pending_at = nil    -- {chunk=, line=}: where the next entry's code comes from

local function begin(n, typed, expr)
  wrap_output()
  current = {n = n, typed = typed, expr = expr, data = {}, pictures = {},
             code = expr and show_code(typed) or typed, at = pending_at}
  pending_at = nil
  cap = {}
end

-- The entry's text in the log (T.entry_text); an entry of a script ends
-- with where its code stands, "--@ at CHUNKNAME LINE" ("@orchard.lua",
-- "=stdin" or "=(command line)", and its first line): the name and line it
-- ran under, so that a replay can run it the same way (LINE - 1 newlines
-- before it).
local logged_text = entry_text

local function out(s) if cap then cap[#cap + 1] = s end end

-- At most this many lines of one entry's output stay in memory for
-- report() once the log has them: a script that prints a great deal must
-- not hold it all.
S.MAX_REPORT_LINES = 2000

local function keep_for_report(e)
  local n = #e.out
  if n <= S.MAX_REPORT_LINES then return end
  for i = n, S.MAX_REPORT_LINES + 1, -1 do e.out[i] = nil end
  e.out[#e.out + 1] = string.format("... (%d more lines, not kept for the report)",
                                    n - S.MAX_REPORT_LINES)
end

local function finish(msg, nres)
  local e = current
  if not e then return end
  -- an expression with no values is a call: it is written as typed
  if e.expr and nres == 0 and real.load(e.typed, "=log", "t", {}) then
    e.expr, e.code = false, e.typed
  end
  current = nil
  local text = table.concat(cap or {})
  cap = nil
  e.out = lines_of(text)
  if msg ~= nil then
    if msg == "interrupted" then e.skip = "interrupted" end
    for i, l in ipairs(lines_of(msg)) do
      e.out[#e.out + 1] = i == 1 and "error: " .. l or l
    end
  end
  S.entries[#S.entries + 1] = e
  log_append(logged_text(e))
  keep_for_report(e)
end

-- An input that did not compile (or, from a log run again, was
-- interrupted): kept as a comment.
local function skipped(n, typed, msg)
  local e = {n = n, typed = typed, data = {}, pictures = {}, out = {},
             skip = msg == "interrupted" and "interrupted" or "does not compile"}
  for i, l in ipairs(lines_of(msg or "")) do e.out[#e.out + 1] = i == 1 and "error: " .. l or l end
  S.entries[#S.entries + 1] = e
  log_append(entry_text(e))
end

local function stamp() return os.date("!%Y-%m-%dT%H:%M:%SZ") end

-- Start logging to path (nil: a new file under ./sluice-logs); returns the
-- path, or nil and a message.
function S.open(path)
  S.started = S.started or stamp()
  if log then log.file:close(); log = nil end
  if path == nil then
    if hooks.mkdir then
      local ok, err = hooks.mkdir("sluice-logs")
      if not ok then return nil, err end
    end
    local base = "sluice-logs/session-" .. os.date("%Y%m%d-%H%M%S")
    path = base .. ".lua"
    local k = 1
    while true do
      local f = real.open(path, "r")
      if not f then break end
      f:close(); k = k + 1; path = base .. "-" .. k .. ".lua"
    end
  end
  local f, err = real.open(path, "a")
  if not f then return nil, err end
  log = {path = path, file = f}
  local head = header_lines(M.version, stamp())
  log_append(table.concat(head, "\n") .. "\n")
  if not log then return nil, "cannot write " .. path end
  return path
end

function S.close()
  if log then log.file:close(); log = nil end
end

-- log(path) starts a new log, log(false) stops it; returns the log's path.
function S.log(path)
  if path == false then S.close(); return nil end
  if path == nil then return log and log.path end
  if type(path) ~= "string" then
    error("bad argument #1 to 'log' (a path or false expected, got " .. type(path) .. ")", 2)
  end
  -- a log run as a script that starts itself again: it is not written over
  if running_log and hooks.realpath and hooks.realpath(path) == running_log then
    return path
  end
  local p, err = S.open(path)
  if not p then error("log: cannot open " .. path .. ": " .. tostring(err), 2) end
  return p
end

-- show(...): print values the way the prompt does.
function S.show(...)
  for i = 1, select("#", ...) do
    local v = select(i, ...)
    local ok, s = pcall(P.format, v)
    if not ok or type(s) ~= "string" then s = tostring(v) end
    if s:sub(-1) ~= "\n" then s = s .. "\n" end
    io.stdout:write(s)
  end
  io.stdout:flush()
end

-- ---- top-level locals: kept from one input to the next ----
--
-- An input runs as its own chunk, so a top-level "local x" would end with
-- it.  Instead each input is compiled inside a wrapper that declares the
-- session's locals the input names, and whose inner function (the input)
-- has its upvalues joined to the variables themselves: a closure of an
-- earlier input and the input now share one variable, as they would in one
-- script.  The input's own declarations stay real locals; at its end a
-- hidden call hands over a closure for each, through which the next input
-- reaches the variable.  So shadowing, closures and "local function f" keep
-- Lua's meaning.  A <const> local is passed on as a value and redeclared
-- <const>; a <close> local is closed when its input ends and is not kept.
-- An input that fails keeps none of its locals.

-- At most this many session locals named in one input (Lua allows 200
-- locals in a function).
S.MAX_LOCALS = 180
local KEEP = "__sluice_keep"   -- the wrapper's name for the hand-over call
local TAG = "__sluice_tag"     -- the wrapper's name for the input's own token

-- A fresh set of session locals: kind[name] is "cell" (cell[name] is a
-- closure whose second upvalue is the variable) or "const" (value[name]).
function S.locals_new() return {kind = {}, cell = {}, value = {}} end
S.locals = S.locals_new()     -- the shell's own session

-- The last top-level declaration of each name, in order; <close> ones and
-- names the wrapper needs for itself are left out.
local function kept_decls(decls)
  local last, order, out = {}, {}, {}
  for _, d in ipairs(decls) do
    if not last[d.name] then order[#order + 1] = d.name end
    last[d.name] = d
  end
  for _, name in ipairs(order) do
    local d = last[name]
    if d.attrib ~= "close" and name ~= KEEP and name ~= TAG then out[#out + 1] = d end
  end
  return out
end

-- The hand-over call of one input: it takes one closure per kept local,
-- each defined in this very chunk over the variable of that name, and
-- records them in st.  Anything else is ignored, so code that calls it
-- itself can only hand over its own variables.  "This very chunk" is not
-- told by the source name (a replayed log chooses its chunk names, and may
-- name one of sluice's own files): each closure's first upvalue must be
-- the wrapper's TAG holding tag, a table made for this input alone, which
-- no function outside the chunk can hold; its second is the variable.
local function hand_over(st, source, decls, tag)
  return function(...)
    if select("#", ...) ~= #decls then return end
    local got = {}
    for i, d in ipairs(decls) do
      local f = select(i, ...)
      if type(f) ~= "function" then return end
      local info = getinfo(f, "S")
      if not info or info.source ~= source or info.what ~= "Lua" then return end
      local t, tv = getupvalue(f, 1)
      if t ~= TAG or not rawequal(tv, tag) then return end
      local up = getupvalue(f, 2)
      if up ~= d.name and not (d.attrib == "const" and up == nil) then return end
      got[i] = f
    end
    for i, d in ipairs(decls) do
      if d.attrib == "const" then
        st.kind[d.name], st.cell[d.name], st.value[d.name] = "const", nil, select(2, got[i]())
      else
        st.kind[d.name], st.cell[d.name], st.value[d.name] = "cell", got[i], nil
      end
    end
  end
end

local function compile(text, name, env)
  if env == nil then return real.load(text, name, "t") end
  return real.load(text, name, "t", env)
end

-- The text of the wrapper around code: consts (passed as values), cells
-- (joined afterwards), and the hand-over call of decls before a top-level
-- return or at the end.
local function wrapper_text(code, consts, cells, decls, ret)
  local head = {"local ", KEEP, ", ", TAG}
  for _, name in ipairs(consts) do head[#head + 1] = ", " .. name .. " <const>" end
  head[#head + 1] = " = ...;"
  if #cells > 0 then head[#head + 1] = " local " .. table.concat(cells, ", ") .. ";" end
  head[#head + 1] = " return function(...) "
  local body = code
  if #decls > 0 then
    local ks = {}
    for i, d in ipairs(decls) do ks[i] = "function() return " .. TAG .. ", " .. d.name .. " end" end
    local call = ";" .. KEEP .. "(" .. table.concat(ks, ", ") .. ")"
    if ret then body = code:sub(1, ret - 1) .. call .. " " .. code:sub(ret)
    else body = code .. "\n" .. call end
  end
  return table.concat(head) .. body .. "\nend"
end

-- Compile one input of a session: like load(code, name, "t", env), but
-- the input sees the session locals of st (default: the shell's own) and
-- leaves its own top-level locals there when it ends.  Returns the
-- function, or nil and the message of a syntax error (the same message as
-- load gives).
function S.load_entry(code, name, env, st)
  st = st or S.locals
  local fn, err = compile(code, name, env)
  if not fn then return nil, err end
  local sc = K.scan(code)
  local consts, cells = {}, {}
  for nm in pairs(sc.names) do
    if st.kind[nm] == "const" then consts[#consts + 1] = nm
    elseif st.kind[nm] == "cell" then cells[#cells + 1] = nm end
  end
  local decls = kept_decls(sc.locals)
  if #consts + #cells + #decls == 0 then return fn end
  if #consts + #cells > S.MAX_LOCALS then
    return nil, string.format("%s: more than %d of the session's locals named in one input",
                              (name:gsub("^[=@]", "")), S.MAX_LOCALS)
  end
  table.sort(consts)
  table.sort(cells)
  local wrap = compile(wrapper_text(code, consts, cells, decls, sc.ret), name, env)
  if not wrap then   -- a label at the end that the hand-over would follow
    decls = {}
    wrap, err = compile(wrapper_text(code, consts, cells, decls, nil), name, env)
    if not wrap then return nil, err end
  end
  local values = {}
  for i, nm in ipairs(consts) do values[i] = st.value[nm] end
  local tag = {}
  local inner = wrap(hand_over(st, name, decls, tag), tag, table.unpack(values, 1, #consts))
  local is_cell = {}
  for _, nm in ipairs(cells) do is_cell[nm] = true end
  for i = 1, 255 do
    local up = getupvalue(inner, i)
    if up == nil then break end
    if is_cell[up] then upvaluejoin(inner, i, st.cell[up], 2) end
  end
  return inner
end

-- ---- scripts and logs, run entry by entry (src/shell/script.c) ----

local origins = {}        -- [k] = {name=, line=}: where input k came from

-- A script's text without what Lua skips before the code: a byte order
-- mark, and a first line that begins with "#" (its newline is kept, so
-- lines keep their numbers).
local function script_body(text)
  if text:sub(1, 3) == "\239\187\191" then text = text:sub(4) end
  if text:sub(1, 1) == "#" then text = text:gsub("^[^\n]*", "", 1) end
  return text
end

-- The entries of a log as the script runner takes them: its code, the
-- line of the log where the code starts, whether the session recorded an
-- error for it, and for an input that did not compile the recorded message.
local function log_plan(text, shown)
  local parsed, err = T.parse(text, shown)
  if not parsed then return nil, err end
  local entries = {}
  for _, e in ipairs(parsed.entries) do
    local r = {n = e.n, code = e.code, typed = e.typed, expr = e.expr, line = e.line + 1,
               skip = e.skip, new_session = e.new_session}
    for _, l in ipairs(e.out) do
      local m = l:match("^error: (.*)$")
      if m then r.error = true; r.message = r.message or m end
    end
    entries[#entries + 1] = r
  end
  running_log = hooks.realpath and hooks.realpath(shown) or nil
  return {log = true, entries = entries}
end

-- How the shell runs text given as a script: {entries = {{code=, typed=,
-- line=, chunk=}}} for a script, whole top-level statements each, chunk
-- the script's own chunk name; {log = true, entries = ...} for a session
-- log.  nil and the message when the text does not compile (or the log
-- does not parse).
function S.plan(text, chunkname, shown)
  if K.is_log(text) then return log_plan(text, shown) end
  local body = script_body(text)
  local ok, err = real.load(body, chunkname, "t")
  if not ok then return nil, err end
  local entries = K.split(body, function(c) return real.load(c, "=entry", "t") ~= nil end)
  for _, e in ipairs(entries) do e.typed, e.chunk = e.code, chunkname end
  return {entries = entries}
end

-- Compile entry e of a plan as input k, shown as from the file shown.  A
-- script's statement runs under the script's own chunk name, after as
-- many empty lines as precede it, so that every position in it (an error
-- the script catches, a traceback) is the file's line.  A log's entry runs
-- as "[input N]", as the prompt ran it; only the error that stops the run
-- is turned into the log's line (S.where).
-- A script's statement without a return of its own ends in "return" of
-- RAN_TO_END, so that one which returns before (a return inside a block at
-- the script's top level) is seen (S.returned): it ends the script, as it
-- ends a Lua chunk.
local RAN_TO_END = "\0sluice: the statement ran to its end"
function S.returned(...)
  return not (select("#", ...) == 1 and (...) == RAN_TO_END)
end

function S.prepare(k, e, shown)
  if e.new_session then S.locals = S.locals_new() end
  if e.chunk then
    pending_at = {chunk = e.chunk, line = e.line}
    local code = e.code
    if not K.scan(code).ret then code = code .. "\nreturn " .. string.format("%q", RAN_TO_END) end
    return S.load_entry(string.rep("\n", e.line - 1) .. code, e.chunk)
  end
  origins[k] = {name = shown, line = e.line}
  return S.load_entry(e.code, "=[input " .. k .. "]")
end

-- msg with each "[input K]:J:" of an input that came from a file turned
-- into that file's name and line.
function S.where(msg)
  return (msg:gsub("%[input (%d+)%]:(%d+):", function(k, j)
    local o = origins[tonumber(k)]
    if o then return o.name .. ":" .. (o.line + tonumber(j) - 1) .. ":" end
  end))
end

-- ---- writing files: pictures recorded, writes checked in the sandbox ----

-- In the sandbox: guard(path, what) raises for a write it refuses, and
-- returns the path to write instead (a relative path lands in --out).
local guard = nil

local function note_picture(path)
  if current and type(path) == "string" then
    current.pictures[#current.pictures + 1] = path
  end
end

-- The position "file:line: " of the innermost caller outside sluice's own
-- Lua files, or "" when there is none (a tail call from C, say).
local function user_position()
  for level = 2, 50 do
    local info = getinfo(level, "Sl")
    if not info then break end
    if info.currentline > 0 and not info.short_src:find("^lua/sluice/") then
      return info.short_src .. ":" .. info.currentline .. ": "
    end
  end
  return ""
end

-- Call fn(...) and raise its error at the user's line that called the
-- public function, not inside this file.
local function as_caller(fn, ...)
  local r = table.pack(pcall(fn, ...))
  if not r[1] then
    if type(r[2]) ~= "string" then error(r[2], 0) end
    error(user_position() .. r[2], 0)
  end
  return table.unpack(r, 2, r.n)
end

-- g:draw as the library has it: exercise{} draws the kit's graph into a
-- temporary folder with it, and notes the picture where the kit ends up.
local raw_draw = nil

-- Wrap the functions of the library that write files.
local function wrap_writers()
  local gm = registry["sluice.graph"]
  if gm and type(gm.__index) == "table" and gm.__index.draw then
    local draw = gm.__index.draw
    raw_draw = draw
    gm.__index.draw = function(g, path, ...)
      local to = guard and guard(path, "g:draw") or path
      local r = as_caller(draw, g, to, ...)
      note_picture(to)
      return r
    end
  end
  -- f:write_csv in the frame's methods (the table its __index reads), so
  -- that the module makes it public like every method: the public wrapper
  -- puts the user's line and the name in front of its errors
  local fm = registry["sluice.frame"]
  local methods = fm and fm.methods
  if type(methods) == "table" and methods.write_csv then
    local write = methods.write_csv
    methods.write_csv = function(f, path, ...)
      if type(path) ~= "string" then
        error("f:write_csv: a file name expected as the path, got " .. type(path), 0)
      end
      return write(f, guard and guard(path, "f:write_csv") or path, ...)
    end
  end
  for _, name in ipairs({"_forest", "_histograms"}) do
    local fn = M[name]
    if fn then
      M[name] = function(path, ...)
        local to = guard and guard(path, "plot =") or path
        local r = fn(to, ...)
        note_picture(to)
        return r
      end
    end
  end
end

-- ---- what sluice.replay needs of the capture (not for users) ----

S._real = real
S._lines_of = lines_of
S._error_text = error_text
S._entry_text = entry_text
S._wrap_output = wrap_output

-- In a replay child: writes go through guard(path, what) (see above).
function S._set_guard(g) guard = g end

-- Run fn(cap) with the output captured as entry n of a replay; returns
-- the text printed and the entry's record {data=, pictures=}.
function S._capture(n, fn)
  wrap_output()
  echo = false
  current = {n = n, data = {}, pictures = {}}
  cap = {}
  local ok, err = pcall(fn, cap)
  local text, run = table.concat(cap), current
  cap, current = nil, nil
  if not ok then error(err, 0) end
  return text, run
end

-- ---- reading a log ----

S.parse = T.parse

-- ---- report ----

local B64 = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
local function base64(s)
  local out = {}
  for i = 1, #s, 3 do
    local a, b, c = s:byte(i, i + 2)
    local n = a * 65536 + (b or 0) * 256 + (c or 0)
    local q = {}
    for k = 3, 0, -1 do
      local v = (n >> (6 * k)) & 63
      q[#q + 1] = B64:sub(v + 1, v + 1)
    end
    if not b then q[3], q[4] = "=", "=" elseif not c then q[4] = "=" end
    out[#out + 1] = table.concat(q)
  end
  return table.concat(out)
end

local function fence(text, info)
  local f = "```"
  while text:find(f, 1, true) do f = f .. "`" end
  return f .. (info or "") .. "\n" .. text .. "\n" .. f
end

local function md_escape(s) return (s:gsub("([\\`*_%[%]<>#&])", "\\%1")) end

-- The session so far as Markdown; images is "link" or "inline" (placeholders
-- sluice-picture-K that the HTML step replaces, returned in a list).
local function report_markdown(inline)
  local md, pics = {}, {}
  md[#md + 1] = "# sluice session report"
  md[#md + 1] = ""
  md[#md + 1] = "- sluice " .. md_escape(M.version) .. ", " .. _VERSION
  md[#md + 1] = "- session started " .. (S.started or "(not recorded)")
  md[#md + 1] = "- report written " .. stamp()
  if log then md[#md + 1] = "- session log: `" .. log.path .. "`" end
  for _, e in ipairs(S.entries) do
    for _, d in ipairs(e.data) do
      md[#md + 1] = string.format("- data read in command %d: `%s` (%d bytes, sha256 `%s`)",
                                  e.n, d.path, d.bytes, d.sha256)
    end
  end
  for _, e in ipairs(S.entries) do
    md[#md + 1] = ""
    md[#md + 1] = "## Command " .. e.n .. (e.skip and (" (" .. e.skip .. ")") or "")
    md[#md + 1] = ""
    md[#md + 1] = fence(e.typed, "lua")
    if #e.out > 0 then   -- control characters shown, never sent to a terminal
      local shown = {}
      for i, l in ipairs(e.out) do shown[i] = T.escape(l) end
      md[#md + 1] = ""
      md[#md + 1] = fence(table.concat(shown, "\n"))
    end
    for _, p in ipairs(e.pictures) do
      md[#md + 1] = ""
      if inline then
        pics[#pics + 1] = p
        md[#md + 1] = string.format("![%s](sluice-picture-%d)", md_escape(p), #pics)
      else
        md[#md + 1] = string.format("![%s](<%s>)", md_escape(p), p)
      end
    end
  end
  md[#md + 1] = ""
  md[#md + 1] = "## Caution"
  md[#md + 1] = ""
  md[#md + 1] = require("sluice.help").caution
  return table.concat(md, "\n") .. "\n", pics
end

-- report(path): the session so far as Markdown, or HTML for a .html path.
function S.report(path)
  if type(path) ~= "string" then
    error("bad argument #1 to 'report' (a path expected, got " .. type(path) .. ")", 2)
  end
  local html = path:lower():match("%.html?$") ~= nil
  local md, pics = report_markdown(html)
  local text = md
  if html then
    if not hooks.markdown_html then
      error("report: HTML needs the sluice program (the Markdown library is linked there)", 2)
    end
    local body = hooks.markdown_html(md)
    for k, p in ipairs(pics) do
      local f = real.open(p, "rb")
      local uri = ""
      if f then
        local data = f:read("a")
        f:close()
        local mime = p:lower():match("%.svg$") and "image/svg+xml"
                     or p:lower():match("%.png$") and "image/png"
                     or p:lower():match("%.pdf$") and "application/pdf" or "application/octet-stream"
        uri = "data:" .. mime .. ";base64," .. base64(data)
      end
      body = body:gsub('src="sluice%-picture%-' .. k .. '"', function() return 'src="' .. uri .. '"' end)
    end
    text = "<!DOCTYPE html>\n<html>\n<head>\n<meta charset=\"utf-8\">\n"
           .. "<title>sluice session report</title>\n<style>\n"
           .. "body{font-family:sans-serif;max-width:50em;margin:2em auto;padding:0 1em}\n"
           .. "pre{background:#f4f4f4;padding:.6em;overflow-x:auto}\nimg{max-width:100%}\n"
           .. "</style>\n</head>\n<body>\n" .. body .. "</body>\n</html>\n"
  end
  local f, err = real.open(path, "wb")
  if not f then error("report: cannot write " .. path .. ": " .. tostring(err), 2) end
  f:write(text)
  f:close()
  return path
end

S.base64 = base64

-- ---- exercise (sluice.exercise) ----

-- What the kit writer may use: the guarded file services of this session;
-- draw writes the graph without noting a picture (its temporary folder
-- goes away) and picture notes the kit's graph.svg where it ends up.
local function exercise_env()
  local g = guard
  return {M = M, registry = registry, fence = fence, open = real.open,
          mkdir = hooks.mkdir, rename = real.rename, remove = real.remove,
          guard = g, picture = note_picture,
          draw = raw_draw and function(gr, p) return raw_draw(gr, g and g(p, "exercise") or p) end}
end

local X = require "sluice.exercise"
function S.exercise(o) return X.run(o, exercise_env()) end

function S.install(mod, metas, hk)
  M, hooks = mod, hk
  local prev = hooks.data_read
  hooks.data_read = function(path, sha, bytes)
    if current then
      current.data[#current.data + 1] = {path = path, sha256 = sha, bytes = bytes}
    end
    if prev then return prev(path, sha, bytes) end
  end
  hooks.session_begin = begin
  hooks.session_out = out
  hooks.session_end = finish
  hooks.session_skip = skipped
  hooks.session_load = function(code, name) return S.load_entry(code, name) end
  hooks.session_plan = S.plan
  hooks.session_prepare = S.prepare
  hooks.session_returned = S.returned
  hooks.session_where = S.where
  hooks.session_logging = function() return log ~= nil end
  hooks.session_start = function()
    S.started = S.started or stamp()
    wrap_output()
  end
  wrap_writers()
  M.log = S.log
  M.show = S.show
  M.report = S.report
  M.exercise = function(o) return S.exercise(o) end
end

return S
