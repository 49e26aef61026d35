-- help(): the overview keeps every function to one line of at most 80
-- columns (a property over all entries), and pages only through the
-- shell's hook, never from a script, and not with help{pager = false}.
-- The pager itself is checked through a terminal in tests/shell/pty_pager.py.
local H = require "sluice.help"

local WIDTH = 80   -- a terminal line

local function width(s) return utf8.len(s) or #s end

test("every summary line of help() is one line that fits 80 columns", function()
  for _, e in ipairs(H.entries) do
    local line = H.summary_line(e)
    eq(line:find("\n") == nil, true, e.name .. ": one line")
    eq(width(line) <= WIDTH, true,
       string.format("%s: %d columns: %s", e.name, width(line), line))
  end
end)

test("every line of help() fits 80 columns and lists every entry once", function()
  local text = H.overview()
  local lines = {}
  for l in (text .. "\n"):gmatch("(.-)\n") do
    lines[#lines + 1] = l
    eq(width(l) <= WIDTH, true, string.format("%d columns: %s", width(l), l))
  end
  local seen = {}
  for _, l in ipairs(lines) do seen[l] = (seen[l] or 0) + 1 end
  for _, e in ipairs(H.entries) do
    eq(seen[H.summary_line(e)] ~= nil, true, e.name .. " is listed: " .. H.summary_line(e))
  end
  -- a long signature wraps between its arguments, nothing is cut: the
  -- lines of estimate's signature joined give it back
  local sig = H.lookup("estimate").sig
  local at = text:find(sig:sub(1, 20), 1, true)
  eq(at ~= nil, true, "estimate's signature starts a line")
  local joined = text:sub(at):match("^(.-)\n%s%s%s+%u") or ""
  eq((joined:gsub("\n%s+", " ")), sig, "estimate's signature, wrapped")
end)

-- Run fn with print and hooks.page replaced by recorders.
local function recorded(fn, page_result)
  local hooks = debug.getregistry()["sluice.hooks"]
  local old_print, old_page = print, hooks.page
  local printed, paged = {}, 0
  print = function(...) printed[#printed + 1] = table.concat({...}, "\t") end
  hooks.page = function(f)
    paged = paged + 1
    if page_result then f() end
    return page_result
  end
  local ok, err = pcall(fn)
  print, hooks.page = old_print, old_page
  if not ok then error(err, 0) end
  return printed, paged
end

test("help() goes through hooks.page; help{pager = false} and help(name) print", function()
  local printed, paged = recorded(function() help() end, true)
  eq(paged, 1, "help() asks the hook")
  eq(#printed, 1, "the hook ran the printing")
  eq(printed[1], H.overview(), "the whole overview")
  printed, paged = recorded(function() help{pager = false} end, true)
  eq(paged, 0, "help{pager = false} does not ask the hook")
  eq(printed[1], H.overview(), "help{pager = false} prints the overview")
  printed, paged = recorded(function() help "g:parents" end, true)
  eq(paged, 0, "help(name) does not page")
  eq(printed[1]:find("g:parents(v)", 1, true), 1, "help(name) prints the entry")
  printed, paged = recorded(function() help() end, false)
  eq(paged, 1, "help() asks the hook")
  eq(printed[1], H.overview(), "the hook declined (no terminal): printed instead")
end)

test("help{} refuses bad options with the name and a suggestion", function()
  raises(function() help{pagr = false} end, "help: unknown option 'pagr'; did you mean 'pager'?")
  raises(function() help{pager = "no"} end, "help: pager = must be true or false, got string")
  raises(function() help(42) end, "bad argument #1 to 'help'", "got number")
end)
