-- run.lua: the Lua-level test suite, run through the shell:
--   build/sluice tests/lua/run.lua [FILE ...]
-- Each tests/lua/test_*.lua file calls test(name, fn); fn uses the checks
-- below.  Ends with the line "N passed, N failed".
local passed, failed = 0, 0

local function where()
  local info = debug.getinfo(4, "Sl")
  return info and (info.short_src .. ":" .. info.currentline) or "?"
end

local function show(v)
  if type(v) == "string" then return string.format("%q", v) end
  return tostring(v)
end

function eq(actual, expected, what)
  if actual ~= expected then
    error(string.format("%s: expected %s, got %s", what or "value", show(expected),
                        show(actual)), 2)
  end
end

function same_list(actual, expected, what)
  local a, e = table.concat(actual, "|"), table.concat(expected, "|")
  if #actual ~= #expected or a ~= e then
    error(string.format("%s: expected {%s}, got {%s}", what or "list", e, a), 2)
  end
end

-- fn must raise an error whose message contains every plain-text pattern.
function raises(fn, ...)
  local ok, msg = pcall(fn)
  if ok then error("expected an error, none raised", 2) end
  msg = tostring(msg)
  for _, p in ipairs({...}) do
    if not msg:find(p, 1, true) then
      error(string.format("error message %q lacks %q", msg, p), 2)
    end
  end
  return msg
end

function test(name, fn)
  local ok, msg = xpcall(fn, function(m) return tostring(m) end)
  if ok then passed = passed + 1
  else
    failed = failed + 1
    print("FAIL " .. name .. ": " .. msg)
  end
end

local files = {...}
if #files == 0 then
  local p = io.popen("ls tests/lua/test_*.lua")
  for f in p:lines() do files[#files + 1] = f end
  p:close()
end
for _, f in ipairs(files) do
  local before = failed
  dofile(f)
  print(string.format("%-34s %s", f, failed == before and "ok" or "FAILED"))
end
print(string.format("%d passed, %d failed", passed, failed))
os.exit(failed == 0 and 0 or 1)
