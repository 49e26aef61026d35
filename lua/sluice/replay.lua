-- sluice.replay: sluice --replay LOG.  Two processes: the parent reads and
-- parses the log, starts a child and judges every entry from what the
-- child sends back (framed records, src/shell/wire.c); the child confines
-- itself in the kernel (src/shell/confine.c) before the first line of the
-- log runs, and runs the entries in a Lua environment of its own.  The
-- child shares nothing with the parent that writes the report, so a log
-- can at worst spoil its own outputs, never the verdict.  The Lua-level
-- blocks here are for clear "blocked:" messages; the kernel makes them hold.
local R = {}

local S = require "sluice.session"
local P = require "sluice.print"
local T = require "sluice.logtext"

-- Captured now, before any replayed code runs: a log that patches the
-- string library in its own environment cannot reach these.
local real = S._real
local concat, pack, format = table.concat, table.pack, string.format
local find, sub, match, gsub, gmatch = string.find, string.sub, string.match, string.gsub,
                                      string.gmatch
local tostring, type, pairs, ipairs, select = tostring, type, pairs, ipairs, select
local setmetatable, getmetatable, rawequal = setmetatable, getmetatable, rawequal
local stdout = io.stdout

local M, hooks            -- the module and the hooks table, set by install

R.DEFAULT_LIMIT = 600     -- seconds an entry may run (--limit)
R.MAX_LOG = 1 << 30       -- bytes of a log that replay reads
R.MAX_RECORDS = 10000     -- records one entry may send
R.MAX_BYTES = 32 << 20    -- bytes one entry may send
R.MAX_LINES = 200000      -- lines one entry may print
R.MAX_TOTAL = 256 << 20   -- bytes all entries together may send
R.MAX_SHOWN = 10          -- differing lines of one entry shown in the report
R.MAX_WIDTH = 300         -- bytes of a shown line (the rest is counted)
R.MAX_PLACED = 1024       -- relative writes whose place in --out is shown as typed

local function say(...) real.fwrite(stdout, ...) end


-- ---- where a replay may write ----

-- Is path, which the replayed code wants to write, beneath the folder whose
-- real path is root?  The nearest folder above path that exists decides, and
-- no ".." may follow it; a link must lead beneath root, and a dangling link
-- is refused (writing through it would create its target).
local function inside(root, path)
  if not root or type(path) ~= "string" or path == "" or find(path, "\0", 1, true) then
    return false
  end
  local function under(p) return p == root or sub(p, 1, #root + 1) == root .. "/" end
  local kind = hooks.file_kind(path, true)
  if kind == "link" then
    local rp = hooks.realpath(path)
    return rp ~= nil and under(rp)
  elseif kind ~= nil then
    local rp = hooks.realpath(path)
    return rp ~= nil and under(rp)
  end
  local dir = match(path, "^(.*)/[^/]*$")
  if dir == nil then dir = "." elseif dir == "" then dir = "/" end
  local made = {}
  while not hooks.realpath(dir) do
    local up, last = match(dir, "^(.*)/([^/]*)$")
    if not up then up, last = ".", dir end
    if up == "" then up = "/" end
    made[#made + 1] = last
    if up == dir then return false end
    dir = up
  end
  for _, c in ipairs(made) do if c == ".." then return false end end
  return under(hooks.realpath(dir))
end

-- ---- where a replay's writes go ----
--
-- With --out DIR a write to a relative path p goes to DIR/p (realpath of
-- DIR), so a session that drew pictures replays into DIR; an absolute path
-- must already be beneath DIR.  inside() then decides on the place, as the
-- kernel does: Landlock allows writes beneath DIR only.  Reads are left as
-- recorded, relative to the working directory.

-- The place of a write to path, or nil when it is not beneath root.
local function place(root, path)
  if math.type(path) then path = tostring(path) end   -- Lua passes numbers as names
  if not root or type(path) ~= "string" or path == "" then return nil end
  local to = sub(path, 1, 1) == "/" and path or root .. "/" .. path
  if not inside(root, to) then return nil end
  return to
end

-- Make the folders of relative path p beneath root that the working
-- directory has, so that g:draw("figs/a.svg") finds figs/ as it did in the
-- session.  Only after place() accepted p; no ".." is followed, and each
-- folder made is checked to be beneath root.
local function mirror(root, p)
  local dir = match(p, "^(.*)/[^/]*$")
  if not dir or dir == "" or hooks.file_kind(dir) ~= "directory" then return end
  for c in gmatch(dir, "[^/]+") do if c == ".." then return end end
  local at = root
  for c in gmatch(dir, "[^/]+") do
    if c ~= "." then
      at = at .. "/" .. c
      if not inside(root, at) then return end
      if not hooks.file_kind(at, true) then hooks.mkdir(at) end
    end
  end
end

-- s with each plain occurrence of a replaced by b.
local function replace_plain(s, a, b)
  local out, i = {}, 1
  while true do
    local j = find(s, a, i, true)
    if not j then break end
    out[#out + 1] = sub(s, i, j - 1)
    out[#out + 1] = b
    i = j + #a
  end
  if i == 1 then return s end
  out[#out + 1] = sub(s, i)
  return concat(out)
end

-- The relative writes placed in --out, so that what an entry prints shows
-- the path as typed (root/p as p): {root=, list = {{to, from}}, seen = {}}.
local function new_placed(root) return {root = root, list = {}, seen = {}} end

local function note_placed(placed, to, from)
  if placed.seen[to] or #placed.list >= R.MAX_PLACED then return end
  placed.seen[to] = true
  placed.list[#placed.list + 1] = {to, from}
  table.sort(placed.list, function(a, b) return #a[1] > #b[1] end)
end

local function as_typed(placed, s)
  if not placed or #placed.list == 0 or not find(s, placed.root .. "/", 1, true) then return s end
  for _, m in ipairs(placed.list) do s = replace_plain(s, m[1], m[2]) end
  return s
end

local function copy(t)
  local c = {}
  for k, v in pairs(t) do c[k] = v end
  return c
end

-- The standard libraries a log sees, each its own copy: patching them in
-- the log changes nothing that the replay itself uses.
local LIBS = {"string", "table", "math", "utf8", "coroutine", "os", "io"}

-- An environment for replayed code, replaying the log at o.log with writes
-- in o.out.  hear.blocked(name) hears of every refusal, hear.log_path(p) of
-- every path log() gives, placed (new_placed) of every relative write placed
-- in --out.
local function sandbox(o, hear, placed)
  local out_dir, blocked = o.out, hear.blocked
  local root = placed.root
  local where = out_dir and ("--out " .. out_dir) or "an --out folder"
  local function refuse(name, level)
    blocked(name)
    error("blocked by the replay sandbox: " .. name, level or 3)
  end
  local function block(name) return function() refuse(name) end end
  -- The place of a write to path; refuses with the message what(path).
  local function put(path, message, level)
    local to = place(root, path)
    if not to then refuse(message .. " writes outside " .. where, level) end
    if to ~= tostring(path) then
      mirror(root, tostring(path))
      note_placed(placed, to, tostring(path))
    end
    return to
  end
  local function guard(path, what)
    return put(path, what .. "(" .. format("%q", tostring(path)) .. ")", 5)
  end
  S._set_guard(guard)
  local env = copy(_G)
  env._G = env
  for _, k in ipairs(LIBS) do env[k] = copy(_G[k]) end
  for _, k in ipairs({"execute", "remove", "rename", "exit", "tmpname"}) do
    env.os[k] = block("os." .. k)
  end
  env.io.popen = block("io.popen")
  env.io.open = function(path, mode)
    mode = mode == nil and "r" or mode
    if not (type(mode) == "string" and find(mode, "^r[b]?$")) then
      path = put(path, "io.open(" .. format("%q", tostring(path)) .. ", \""
                       .. tostring(mode) .. "\")", 4)
    end
    return real.open(path, mode)
  end
  env.io.output = function(f)
    if type(f) == "string" or math.type(f) then
      f = put(f, "io.output(" .. format("%q", tostring(f)) .. ")", 4)
    end
    return real.output(f)
  end
  env.debug = setmetatable({}, {__index = function(_, k) return block("debug." .. tostring(k)) end})
  -- strings share one metatable: hand out a copy whose __index is the log's string
  local strmeta = {__index = env.string}
  env.getmetatable = function(v)
    if type(v) == "string" then return strmeta end
    return getmetatable(v)
  end
  local mod = copy(M)
  -- log() gives the path of the log this replay writes, if it started one,
  -- else of the log it replays: the session's own log, which moved
  local stopped = false
  mod.log = function(path)
    if path == false then stopped = true return S.log(false) end
    if path ~= nil then
      local to = guard(path, "log")
      stopped = false
      return S.log(to)
    end
    local p = S.log(nil)
    if p == nil and not stopped then p = o.log end
    if type(p) == "string" then hear.log_path(as_typed(placed, p)) end
    return p
  end
  mod.report = function(path, ...)
    return S.report(guard(path, "report"), ...)
  end
  mod.exercise = function(args, ...)
    local dir = type(args) == "table" and args.dir
    if type(dir) == "string" and dir ~= "" or math.type(dir) then
      local c = copy(args)
      c.dir = guard(dir, "exercise")
      return S.exercise(c, ...)
    end
    return S.exercise(args, ...)
  end
  for _, k in ipairs({"log", "report", "exercise"}) do env[k] = mod[k] end
  env.package = copy(package)
  env.package.preload = {}   -- the real loaders compile in the real globals
  env.package.loadlib = block("package.loadlib")
  env.package.searchers = setmetatable({}, {__index = function(_, k)
    return block("package.searchers[" .. tostring(k) .. "]")
  end})
  env.package.searchpath = block("package.searchpath")
  local subst = {_G = env, debug = env.debug, package = env.package, sluice = mod}
  for _, k in ipairs(LIBS) do subst[k] = env[k] end
  -- modules that write files or run the sandbox: not for replayed code
  local internal = {["sluice.session"] = true, ["sluice.replay"] = true, ["sluice.exercise"] = true}
  env.package.loaded = setmetatable({}, {__index = function(_, k)
    if subst[k] then return subst[k] end
    if internal[k] then return nil end
    return package.loaded[k]
  end})
  env.require = function(name)
    if subst[name] then return subst[name] end
    if internal[name] then
      refuse("require(" .. format("%q", name) .. "): the session layer is not for replayed code")
    end
    if type(name) == "string" and package.loaded[name] ~= nil then return package.loaded[name] end
    refuse("require(" .. format("%q", tostring(name)) .. ") of a module not built in")
  end
  env.load = function(chunk, name, mode, e)
    if e == nil then e = env end
    return real.load(chunk, name, "t", e)
  end
  env.loadfile = function(path, mode, e)
    if e == nil then e = env end
    return real.loadfile(path, "t", e)
  end
  env.dofile = function(path)
    local f, err = real.loadfile(path, "t", env)
    if not f then error(err, 2) end
    return f()
  end
  env.collectgarbage = function(opt, ...)
    if opt == nil or opt == "collect" or opt == "count" or opt == "step" then
      return collectgarbage(opt, ...)
    end
    refuse("collectgarbage(" .. format("%q", tostring(opt)) .. ")")
  end
  return env
end

-- ---- the child: run the entries, send what they printed ----

-- The error message without the position of a one-line input.
local function strip_position(e, msg)
  local id = "[input " .. e.n .. "]:1: "
  if not find(e.typed, "\n", 1, true) and sub(msg, 1, #id) == id then
    return sub(msg, #id + 1)
  end
  return msg
end

-- Run one entry as the prompt (or the script) did: the text it printed,
-- whether it raised an error, the files it read and drew, and a compile
-- message.  It sees the top-level locals of the entries before it (locals,
-- S.locals_new) and leaves its own there.  An entry of a script runs under
-- the script's chunk name and line ('--@ at', e.at), which only label the
-- positions in messages.
local function run_entry(e, env, placed, locals)
  -- as statements only, the way `sluice LOG` runs them: the prompt wrote an
  -- expression as show(...), so no entry of a real log is a bare expression
  local name, code = "=[input " .. e.n .. "]", e.code
  if e.at then name, code = e.at.chunk, string.rep("\n", e.at.line - 1) .. e.code end
  local fn, msg = S.load_entry(code, name, env, locals)
  -- the suggestion for a misspelled name comes from the log's own globals
  local function handler(err) return S._error_text(err, env) end
  local failed = false
  local text, run = S._capture(e.n, function(cap)
    if not fn then
      failed = true
      cap[#cap + 1] = "error: " .. strip_position(e, msg) .. "\n"
      return
    end
    local r = pack(xpcall(fn, handler))
    -- a script's statement prints nothing of what it returns (a return at
    -- its top level ended the script, which the log then ends with too)
    if r[1] and e.at then return end
    if r[1] then
      for i = 2, r.n do
        local ok, s = pcall(P.format, r[i])
        if not ok or type(s) ~= "string" then s = tostring(r[i]) end
        if sub(s, -1) ~= "\n" then s = s .. "\n" end
        cap[#cap + 1] = s
      end
    else
      failed = true
      local lines = S._lines_of(tostring(r[2]))
      cap[#cap + 1] = "error: " .. strip_position(e, concat(lines, "\n")) .. "\n"
    end
  end)
  return as_typed(placed, text), failed, run, not fn and msg
end

-- The child's whole life; it never returns.
local function child_main(parsed, o)
  local send, leave = hooks.replay_send, hooks.replay_exit
  S._wrap_output()   -- before the environment copies print and io.write
  -- help() pages only when the prompt set the pager up; a replay child
  -- never starts one (nor any other program), trusted or not
  hooks.page = nil
  if not o.trust then
    -- what code that escaped the Lua layer could still misuse: native
    -- loaders, the replay's own hooks, the debug library (the session
    -- layer keeps the one function it needs)
    package.loadlib = nil
    package.cpath = ""
    for i = #package.searchers, 3, -1 do package.searchers[i] = nil end
    for _, k in ipairs({"replay_spawn", "replay_send", "replay_exit", "read_regular",
                        "fingerprint", "file_id", "now", "sandbox_available"}) do
      hooks[k] = nil
    end
    _G.debug, package.loaded.debug = nil, nil
  end
  local blocked_here, log_paths = {}, {}
  local hear = {blocked = function(name) blocked_here[#blocked_here + 1] = name end,
                log_path = function(p) log_paths[p] = true end}
  local env, locals
  -- SLUICE_TEST_KERNEL_ONLY: the tests' way to show that the kernel alone holds
  local bare = os.getenv("SLUICE_TEST_KERNEL_ONLY") ~= nil
  local placed = not (o.trust or bare) and new_placed(o.out and hooks.realpath(o.out)) or nil
  local function fresh()
    locals = S.locals_new()
    if o.trust or bare then
      env = _G
      env.log = function() return nil end
    else
      env = sandbox(o, hear, placed)
    end
  end
  fresh()
  for _, e in ipairs(parsed.entries) do
    if not e.skip then
      if e.new_session then fresh() end
      blocked_here, log_paths = {}, {}
      send("E", tostring(e.n))
      local text, failed, run, cmsg = run_entry(e, env, placed, locals)
      send("O", text)
      -- the lines that are what sluice's log() gave: the log's path
      if next(log_paths) then
        local vol = {}
        for i, l in ipairs(S._lines_of(text)) do if log_paths[l] then vol[#vol + 1] = i end end
        if #vol > 0 then send("V", concat(vol, " ")) end
      end
      if failed then send("F", "") end
      if cmsg then send("C", cmsg) end
      for _, d in ipairs(run.data) do
        send("D", concat({tostring(d.path), tostring(d.bytes), tostring(d.sha256)}, "\0"))
      end
      for _, p in ipairs(run.pictures) do send("P", as_typed(placed, tostring(p))) end
      for _, b in ipairs(blocked_here) do send("B", tostring(b)) end
      send("Z", "")
    end
  end
  send("Q", "")
  leave(0)
end

-- ---- the parent: judge each entry ----

local function first_difference(a, b)
  for i = 1, math.max(#a, #b) do
    if a[i] ~= b[i] then return i end
  end
end

-- The lines at which outputs a and b differ, as {line=, expected=, got=}:
-- past the common head and tail the rest is compared line by line, so a
-- line added or dropped shows once rather than shifting every later line.
local function differing_lines(a, b)
  local na, nb, head, tail = #a, #b, 0, 0
  while head < na and head < nb and a[head + 1] == b[head + 1] do head = head + 1 end
  while tail < na - head and tail < nb - head and a[na - tail] == b[nb - tail] do
    tail = tail + 1
  end
  local ma, mb, list = na - head - tail, nb - head - tail, {}
  for k = 1, math.max(ma, mb) do
    local x, y = k <= ma and a[head + k] or nil, k <= mb and b[head + k] or nil
    if x ~= y then list[#list + 1] = {line = head + k, expected = x, got = y} end
  end
  return list
end

-- A line for the report, cut at MAX_WIDTH bytes (on a UTF-8 boundary).
local function clip(l)
  if l == nil then return "(nothing)" end
  if #l <= R.MAX_WIDTH then return l end
  local cut = R.MAX_WIDTH
  while cut > 0 and find(sub(l, cut + 1, cut + 1), "^[\128-\191]") do cut = cut - 1 end
  return sub(l, 1, cut) .. format(" ... (%d more bytes)", #l - cut)
end

-- Show where an entry's output differs: every differing line up to
-- MAX_SHOWN, then how many more.
local function show_differences(expected, got)
  local list = differing_lines(expected, got)
  for i = 1, math.min(#list, R.MAX_SHOWN) do
    local d = list[i]
    say(format("  line %d of its output:\n    expected: %s\n    got:      %s\n", d.line,
               clip(d.expected), clip(d.got)))
  end
  if #list > R.MAX_SHOWN then
    local more = #list - R.MAX_SHOWN
    say(format("  (and %d more line%s differ%s)\n", more, more == 1 and "" or "s",
               more == 1 and "s" or ""))
  end
end

-- The records of entry e from the child: {out=, failed=, data=, pictures=,
-- blocked=, cmsg=, volatile = {[line] = true}}, or nil, what ("timeout",
-- "ended", "broken", "setup") and a detail.
local total_bytes = 0
local function collect(child, e, limit, first)
  local r = {out = "", failed = false, data = {}, pictures = {}, blocked = {}, volatile = {}}
  local deadline, count, bytes = hooks.now() + limit, 0, 0
  local function recv()
    local kind, p, detail = child:recv(math.max(deadline - hooks.now(), 0))
    count = count + 1
    bytes = bytes + (kind and #p or 0)
    total_bytes = total_bytes + (kind and #p or 0)
    if kind and (count > R.MAX_RECORDS or bytes > R.MAX_BYTES or total_bytes > R.MAX_TOTAL) then
      child:stop()
      return nil, "broken", "the replay process sent more than one entry may"
    end
    return kind, p, detail
  end
  local kind, p, detail = recv()
  if not kind then return nil, p, detail end
  -- only the child's first record, sent before any of the log runs, may
  -- say that the sandbox could not be set up
  if first and kind == "Q" and p ~= "" then return nil, "setup", p end
  if kind ~= "E" or p ~= tostring(e.n) then
    child:stop()
    return nil, "broken", "the replay process answered out of turn"
  end
  local seen_out = false
  while true do
    kind, p, detail = recv()
    if not kind then return nil, p, detail end
    if kind == "O" and not seen_out then r.out, seen_out = p, true
    elseif kind == "F" then r.failed = true
    elseif kind == "C" then r.cmsg = p
    elseif kind == "D" then
      local path, size, sha = match(p, "^([^%z]*)%z(%d+)%z(%x+)$")
      if path and #size <= 15 and #sha == 64 then
        r.data[#r.data + 1] = {path = path, bytes = tonumber(size), sha256 = sha}
      end
    elseif kind == "P" then r.pictures[#r.pictures + 1] = p
    elseif kind == "B" then r.blocked[#r.blocked + 1] = p
    elseif kind == "V" then
      for d in gmatch(p, "%d+") do
        if #d <= 9 then r.volatile[tonumber(d)] = true end
      end
    elseif kind == "Z" and seen_out then return r
    else
      child:stop()
      return nil, "broken", "the replay process sent a record out of place"
    end
  end
end

-- The volatile lines of entry e, not compared: each marked so in the log
-- (or the line of a query of the log's path) and, in the replay, what
-- sluice's own log() gave.  Neither side alone makes a line volatile: a
-- log cannot exempt a result by marking it, nor replayed code by printing
-- it.  Returns their numbers and the output to compare (got with the
-- recorded text on those lines).
local function volatile(e, r, got)
  local vol = {}
  for _, i in ipairs(T.volatile_lines(e)) do
    if r.volatile[i] and got[i] ~= nil then vol[#vol + 1] = i end
  end
  if #vol == 0 then return vol, got end
  local cmp = table.move(got, 1, #got, 1, {})
  for _, i in ipairs(vol) do cmp[i] = e.out[i] end
  return vol, cmp
end

-- Show the volatile lines that differ (up to MAX_SHOWN); returns how many differ.
local function show_volatile(vol, expected, got)
  local n = 0
  for _, i in ipairs(vol) do
    if expected[i] ~= got[i] then
      n = n + 1
      if n <= R.MAX_SHOWN then
        say(format("  line %d of its output is volatile (the log's path), not compared:\n"
                   .. "    expected: %s\n    got:      %s\n", i, clip(expected[i]), clip(got[i])))
      end
    end
  end
  if n > R.MAX_SHOWN then
    local more = n - R.MAX_SHOWN
    say(format("  (and %d more volatile line%s)\n", more, more == 1 and "" or "s"))
  end
  return n
end

-- Does the code begin, after blanks and comments, with "("?  Lua would read
-- it as a call of the last expression of the entry before.
local function opens_with_paren(code)
  local i = 1
  while true do
    i = find(code, "[^%s]", i) or #code + 1
    if sub(code, i, i + 1) ~= "--" then break end
    local eqs = match(code, "^%[(=*)%[", i + 2)
    if eqs then
      local _, close = find(code, "]" .. eqs .. "]", i, true)
      i = (close or #code) + 1
    else
      i = (find(code, "\n", i, true) or #code) + 1
    end
  end
  return sub(code, i, i) == "("
end

-- The recorded data files of entry e as they are now; the parent reads
-- them itself.  Returns "ok" or "differs".
local checked = {}   -- path .. " " .. bytes: sha or false, and why
local function check_data(e, limit)
  local status = "ok"
  for _, d in ipairs(e.data) do
    local key = d.path .. "\0" .. d.bytes
    if not checked[key] then
      local sha, why = hooks.fingerprint(d.path, d.bytes, hooks.now() + limit)
      if sha and why ~= d.bytes then sha, why = false, "its size is not the recorded one" end
      checked[key] = {sha or false, why}
    end
    local sha, bytes = checked[key][1], checked[key][2]
    if bytes == "timeout" then
      say(format("data not checked: %s (reading it took longer than --limit)\n", T.escape(d.path)))
      status = "differs"
    elseif not sha and bytes == "its size is not the recorded one" then
      say(format("data changed: %s (recorded %d bytes, now a different size)\n",
                 T.escape(d.path), d.bytes))
      status = "differs"
    elseif not sha then
      say(format("data missing: %s (recorded sha256 %s, %d bytes): %s\n", T.escape(d.path),
                 d.sha256, d.bytes, tostring(bytes)))
      status = "differs"
    elseif sha ~= d.sha256 then
      say(format("data changed: %s (recorded sha256 %s, now %s)\n", T.escape(d.path),
                 d.sha256, sha))
      status = "differs"
    end
  end
  return status
end

-- Read the log file: its text and identity, or nil after saying why.
local function read_log(path, shown)
  local text, id = hooks.read_regular(path, R.MAX_LOG)
  if not text then
    say("sluice: cannot read the log: ", shown, ": ", tostring(id), "\n")
    return nil
  end
  return text, id
end

-- sluice --replay LOG: returns the exit status.
function R.replay(o)
  local lname = T.escape(o.log)   -- a file name may hold control characters too
  local text, log_id = read_log(o.log, lname)
  if not text then return 1 end
  local parsed, perr = T.parse(text, o.log)
  if not parsed then say("sluice: ", T.escape(perr), "\n") return 1 end
  if T.version_newer(parsed.version, M.version) then
    say(format("sluice: %s was written by sluice %s, newer than this sluice %s; "
               .. "replay it with sluice %s or later\n", lname, T.escape(parsed.version),
               M.version, T.escape(parsed.version)))
    return 1
  end
  if o.out and hooks.file_kind(o.out) ~= "directory" then
    say("sluice: --out ", T.escape(o.out), ": no such folder\n")
    return 2
  end
  if not o.trust then
    local ok, why = hooks.sandbox_available()
    if not ok then
      say("sluice: will not replay ", lname, " without --trust: ", why,
          "; replay it on a kernel that has both, or give --trust if you wrote the log yourself\n")
      return 1
    end
  end
  local limit = o.limit or R.DEFAULT_LIMIT
  local runnable = 0
  for _, e in ipairs(parsed.entries) do if not e.skip then runnable = runnable + 1 end end
  say(format("replaying %s: %d entries, %s\n", lname, #parsed.entries,
             o.trust and "trusted (no sandbox)"
             or ("sandboxed, writes " .. (o.out and ("inside " .. T.escape(o.out)) or "nowhere"))))
  local child = hooks.replay_spawn{out = o.out and hooks.realpath(o.out) or nil,
                                   confine = not o.trust,
                                   cpu = math.floor(2 * limit * (runnable + 1))}
  if child == "child" then child_main(parsed, o) end
  local total, matched, differed, notrun, blocked_all = 0, 0, 0, 0, 0
  local blocked_n, kept = 0, 0   -- entries with a blocked call; of them, kept by --update
  local volatile_n = 0           -- volatile lines that differed, not compared
  local stopped, first = nil, true
  for _, e in ipairs(parsed.entries) do
    if e.skip then
      say(format("in %d: skipped (%s at the prompt)\n", e.n, T.escape(e.skip)))
      goto continue
    end
    total = total + 1
    if stopped then
      notrun = notrun + 1
      say(format("in %d: not run (%s)\n", e.n, stopped))
      goto continue
    end
    if opens_with_paren(e.code) then
      say(format("in %d: its code begins with '(': when the log runs as a script, Lua reads "
                 .. "it as a call of the entry before (write ';(' at the start)\n", e.n))
    end
    do
      local status = check_data(e, limit)
      local r, what, detail = collect(child, e, limit, first)
      first = false
      if not r then
        if what == "setup" then
          child:stop()
          say("sluice: ", T.escape(detail), "\n")
          return 1
        end
        local why = what == "timeout" and format("timed out after %g s (--limit)", limit)
                    or what == "ended" and ("killed: " .. T.escape(tostring(detail)))
                    or ("error: " .. T.escape(tostring(detail)))
        say(format("in %d: %s\n", e.n, why))
        differed = differed + 1
        stopped = "the replay stopped at in " .. e.n
        goto continue
      end
      local nl = select(2, gsub(r.out, "\n", "\n"))
      if nl > R.MAX_LINES then
        say(format("in %d: error: it printed more than %d lines\n", e.n, R.MAX_LINES))
        differed = differed + 1
        child:stop()
        stopped = "the replay stopped at in " .. e.n
        goto continue
      end
      local got = S._lines_of(r.out)
      for i, l in ipairs(got) do got[i] = T.escape(l) end
      if r.cmsg then
        say(format("in %d: error: line %d of the log is not valid Lua%s: %s\n", e.n,
                   e.line + 1, e == parsed.entries[#parsed.entries] and parsed.truncated
                   and " (the log is truncated)" or "", T.escape(r.cmsg)))
        status = "error"
      end
      local recorded_error = false
      for _, l in ipairs(e.out) do if find(l, "^error: ") then recorded_error = true end end
      local vol, cmp = volatile(e, r, got)
      local at = first_difference(e.out, cmp)
      if r.cmsg or (at and r.failed and not recorded_error) or opens_with_paren(e.code) then
        status = "error"
      elseif at then status = "differs" end
      -- a blocked call decides the verdict: the output it left (the sandbox's
      -- error, or one --update wrote) proves nothing about the recorded one
      if #r.blocked > 0 then status = "blocked" end
      if status == "ok" then matched = matched + 1
      elseif status == "blocked" then blocked_n = blocked_n + 1
      else differed = differed + 1 end
      say(format("in %d: %s\n", e.n, status))
      if at then show_differences(e.out, cmp) end
      volatile_n = volatile_n + show_volatile(vol, e.out, got)
      for _, b in ipairs(r.blocked) do
        blocked_all = blocked_all + 1
        say(format("blocked: in %d: %s\n", e.n, T.escape(b)))
      end
      -- --update keeps the recorded output of an entry with a blocked call:
      -- the sandbox's refusal is not what the entry printed
      if o.update and #r.blocked == 0 then
        e.new_out, e.new_data, e.new_pictures = cmp, r.data, r.pictures
        e.new_volatile = {}
        for _, i in ipairs(vol) do e.new_volatile[i] = true end
      elseif o.update then kept = kept + 1 end
    end
    ::continue::
  end
  if not stopped then
    local kind, p, detail = child:recv(limit)
    if kind ~= "Q" then
      say("sluice: the replay process did not end cleanly: ",
          T.escape(tostring(kind and ("record " .. kind) or detail or p)), "\n")
      differed = differed + 1
    end
  end
  child:stop()
  say(format("%d commands: %d matched, %d differed%s%s\n", total, matched, differed,
             blocked_n > 0 and format(", %d blocked", blocked_n) or "",
             notrun > 0 and format(", %d not run", notrun) or ""))
  if volatile_n > 0 then
    say(format("%d volatile line%s (the log's path) not compared\n", volatile_n,
               volatile_n == 1 and "" or "s"))
  end
  if blocked_all > 0 then
    say(format("%d call%s blocked by the replay sandbox (--trust lifts it)\n",
               blocked_all, blocked_all == 1 and " was" or "s were"))
  end
  if o.update then
    if stopped then
      say("sluice: --update: not rewriting ", lname, ": the replay stopped early\n")
      return 1
    end
    -- the child is gone; the log must still be the file that was read
    if hooks.file_id(o.log) ~= log_id then
      say("sluice: --update: not rewriting ", lname, ": it changed during the replay\n")
      return 1
    end
    local bak_id, bak_kind = hooks.file_id(o.log .. ".bak")
    if bak_id and bak_kind ~= "regular" then
      say("sluice: --update: not rewriting ", lname, ": ", lname, ".bak is not a regular file\n")
      return 1
    end
    local ok, uerr = R.rewrite(o.log, text, parsed)
    if not ok then say("sluice: --update: ", uerr, "\n") return 1 end
    say("updated ", lname, " (the old log is ", lname, ".bak)",
        kept > 0 and format("; %d entr%s with a blocked call kept %s recorded output", kept,
                            kept == 1 and "y" or "ies", kept == 1 and "its" or "their") or "",
        "\n")
  end
  return (differed == 0 and blocked_all == 0) and 0 or 1
end

-- Rewrite the log with the outputs of the replay; the old one goes to .bak.
function R.rewrite(path, old_text, parsed)
  local b = real.open(path .. ".bak", "wb")
  if not b then return nil, "cannot write " .. path .. ".bak" end
  b:write(old_text)
  b:close()
  local out = {concat(parsed.head, "\n")}
  for _, e in ipairs(parsed.entries) do
    if e.new_session then   -- a later session starts afresh on the next replay too
      out[#out + 1] = concat(T.header_lines(parsed.version, "(a later session)"), "\n")
    end
    local n = {n = e.n, typed = e.typed, expr = e.expr, skip = e.skip, code = e.code,
               out = e.new_out or e.out, data = e.new_data or e.data,
               pictures = e.new_pictures or e.pictures,
               volatile = e.new_volatile or e.volatile, at = e.at}
    out[#out + 1] = sub(T.entry_text(n), 1, -2)
  end
  local f, err = real.open(path, "wb")
  if not f then return nil, err end
  f:write(concat(out, "\n"), "\n")
  f:close()
  return true
end

function R.install(mod, metas, hk)
  M, hooks = mod, hk
end

return R
