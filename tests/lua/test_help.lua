-- help covers every public function, and docs/functions.md is generated
-- from the same entries.
local H = require "sluice.help"
local S = require "sluice"

-- A small frame read from the test data.
function frame_sample() return read_csv "tests/data/orchard.csv" end

test("every module function and graph method has a help entry", function()
  for name, v in pairs(S) do
    if type(v) == "function" and not name:match("^_") then
      eq(H.lookup(name) ~= nil, true, "help for " .. name)
    end
  end
  local methods = getmetatable(graph "a").__index
  for name in pairs(methods) do
    eq(H.lookup("g:" .. name) ~= nil, true, "help for g:" .. name)
  end
  for name in pairs(getmetatable(sem(graph "a -> b", {["a -> b"] = 1})).__index) do
    eq(H.lookup("m:" .. name) ~= nil, true, "help for m:" .. name)
  end
  for name in pairs(getmetatable(frame_sample()).methods) do
    eq(H.lookup("f:" .. name) ~= nil, true, "help for f:" .. name)
  end
end)

test("every help entry names something that exists", function()
  local f = frame_sample()
  local kinds = {g = getmetatable(graph "a").__index, f = getmetatable(f).methods,
                 m = getmetatable(sem(graph "a -> b", {["a -> b"] = 1})).__index,
                 c = getmetatable(f[f:names()[1]]).methods}
  for _, e in ipairs(H.entries) do
    local k, m = e.name:match("^([gfcm]):(.+)$")
    if k then eq(kinds[k][m] ~= nil, true, e.name)
    elseif e.name ~= "tostring" then eq(S[e.name] ~= nil, true, e.name) end
  end
end)

test("help text and suggestions", function()
  eq(H.text("parents"):find("g:parents(v)", 1, true), 1)
  eq(H.text():find("Estimates rest on the assumptions", 1, true) ~= nil, true, "caution")
  raises(function() return H.text "parnets" end, "did you mean 'parents'?")
end)

test("docs/functions.md is up to date (make docs)", function()
  local p = io.popen((os.getenv("B") or "build") .. "/sluice tools/gendocs.lua")
  local generated = p:read("a")
  p:close()
  local f = assert(io.open("docs/functions.md"))
  eq(f:read("a") == generated, true, "docs/functions.md matches the help entries")
  f:close()
end)

test("the methods of an identification result find g:identify's entry", function()
  eq(H.lookup("r:evaluate"), H.lookup("g:identify"))
  eq(H.lookup("evaluate"), H.lookup("g:identify"))
  eq(H.lookup("r:latex"), H.lookup("g:identify"))
end)
