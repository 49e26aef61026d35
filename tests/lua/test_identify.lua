-- g:identify, r:latex and r:evaluate from Lua: the result's fields and
-- printing, the routes beside the general formula, and every bad input.
-- The formulas themselves are checked in tests/c/test_identify.c against
-- the textbooks, and the numbers in tests/oracle/identify_oracle.py
-- against exact interventional distributions.

local front = graph "x -> m -> y; x <-> y"

-- A weighted frame of a joint distribution of binary x, m, y, written to a
-- temporary CSV (invented numbers, for the plumbing only).
local function frame_of(rows, header)
  local path = os.tmpname()
  local f = assert(io.open(path, "w"))
  f:write(header or "x,m,y,w", "\n")
  for _, r in ipairs(rows) do f:write(table.concat(r, ","), "\n") end
  f:close()
  local d = read_csv(path)
  os.remove(path)
  return d
end

local joint = {
  {0, 0, 0, 0.2}, {0, 0, 1, 0.1}, {0, 1, 0, 0.05}, {0, 1, 1, 0.15},
  {1, 0, 0, 0.1}, {1, 0, 1, 0.05}, {1, 1, 0, 0.1}, {1, 1, 1, 0.25},
}

test("front-door: formula, no adjustment set, tostring", function()
  local r = front:identify("x", "y")
  eq(r.identified, true)
  -- Pearl 2009, eq. 3.42
  eq(r.formula, "P(y | do(x)) = Σ_m P(m | x) Σ_x' P(y | x', m) P(x')")
  eq(r.adjustment, nil, "no adjustment set in the front-door graph")
  eq(tostring(r):find("no adjustment set exists", 1, true) ~= nil, true, "tostring")
  eq(r:latex(), "P(y \\mid do(x)) = \\sum_{m} P(m \\mid x) \\sum_{x'} P(y \\mid x', m) P(x')")
end)

test("the front-door set beside the formula, when g:frontdoor exists", function()
  local r = front:identify("x", "y")
  if front.frontdoor then
    same_list(r.frontdoor, {"m"})
    eq(tostring(r):find("also by the front-door formula through {m}", 1, true) ~= nil, true)
  else
    eq(r.frontdoor, nil)
  end
end)

test("back-door: the adjustment set beside the formula", function()
  local r = graph("z -> x -> y; z -> y"):identify("x", "y")
  eq(r.formula, "P(y | do(x)) = Σ_z P(y | x, z) P(z)")
  same_list(r.adjustment, {"z"})
  eq(tostring(r):find("also by adjustment for {z}", 1, true) ~= nil, true, "tostring")
end)

test("bow arc: not identified, the hedge and why", function()
  local r = graph("x -> y; x <-> y"):identify("x", "y")
  eq(r.identified, false)
  same_list(r.hedge.f, {"x", "y"})
  same_list(r.hedge.f2, {"y"})
  eq(r.why:find("the effect of x on y is not identified", 1, true), 1, "why")
  eq(tostring(r):find("not identified", 1, true) ~= nil, true, "tostring")
  raises(function() return r:evaluate(frame_of(joint), {at = {x = 1}, weights = "w"}) end,
         "evaluate: the effect is not identified")
end)

test("conditional effect by IDC", function()
  local r = front:identify("x", "y", {given = "m"})
  eq(r.formula, "P(y | do(x), m) = Σ_x' P(y | x', m) P(x')")
  same_list(r.given, {"m"})
  local t = r:evaluate(frame_of(joint), {at = {x = 1, m = 1}, weights = "w"})
  -- by hand from the table: sum_x' P(y=1 | x', m=1) P(x') = .5 (.15/.2) + .5 (.25/.35)
  eq(math.abs(t[1] - (0.5 * 0.75 + 0.5 * 0.25 / 0.35)) < 1e-12, true, "value")
end)

test("evaluate: the front-door value by hand, and its printing", function()
  local r = front:identify("x", "y")
  local t = r:evaluate(frame_of(joint), {at = {x = 1}, weights = "w"})
  -- by hand: P(m=1 | x=1) = .7; sum_x' P(y=1 | x', m) P(x') = 1/3 (m = 0), .5 (.75 + .25/.35) (m = 1)
  local want = 0.3 * (1 / 3) + 0.7 * 0.5 * (0.75 + 0.25 / 0.35)
  eq(math.abs(t[1] - want) < 1e-12, true, "P(y = 1 | do(x = 1))")
  eq(math.abs(t[0] + t[1] - 1) < 1e-12, true, "sums to 1")
  eq(tostring(t):match("^P%(y | do%(x = 1%)%)\n  y = 0  0.3875\n  y = 1  0.6125$") ~= nil, true,
     tostring(t))
end)

test("evaluate: text levels and unweighted rows", function()
  local rows = {}
  for _, r in ipairs({{"lo", "a", "no"}, {"lo", "b", "yes"}, {"hi", "b", "yes"}, {"hi", "a", "no"},
                      {"hi", "b", "no"}, {"lo", "a", "yes"}}) do rows[#rows + 1] = r end
  local f = frame_of(rows, "x,m,y")
  local t = front:identify("x", "y"):evaluate(f, {at = {x = "hi"}})
  -- P(m | x=hi): a 1/3, b 2/3; P(x): hi 1/2, lo 1/2;
  -- P(y=yes | x, m): lo,a 1/2; hi,a 0; lo,b 1; hi,b 1/2
  local want = (1 / 3) * (0.5 * 0.5 + 0.5 * 0) + (2 / 3) * (0.5 * 1 + 0.5 * 0.5)
  eq(math.abs(t.yes - want) < 1e-12, true, "P(y = yes | do(x = hi))")
end)

test("bad input: each names what is wrong", function()
  local r = front:identify("x", "y")
  local f = frame_of(joint)
  raises(function() return front:identify("x", "x") end, "'x' is both a treatment and an outcome")
  raises(function() return front:identify("x", "y", {givn = "m"}) end, "identify:",
         "unknown option 'givn'; did you mean 'given'?")
  raises(function() return front:identify("x", "y", {given = "x"}) end, "given = 'x' is also a treatment")
  raises(function() return front:identify("x", "y", {given = "q"}) end, "no node 'q'")
  local h = graph "hidden u; u -> y; x -> y"
  raises(function() return h:identify("u", "y") end, "'u' is hidden")
  raises(function() return front:identify("x", "y", {given = 3}) end, "given = must be a node name")
  raises(function() return r:evaluate(f, {at = {x = 2}, weights = "w"}) end,
         "evaluate: at: x = 2 is not a value of column 'x' (its values: 0, 1)")
  raises(function() return r:evaluate(f, {at = {}, weights = "w"}) end,
         "evaluate: at = gives no value for 'x' (a treatment)")
  raises(function() return r:evaluate(f, {at = {x = 1, q = 1}}) end,
         "evaluate: at: 'q' is neither a treatment nor a condition")
  raises(function() return r:evaluate(f, {at = {x = 1}, weights = "ww"}) end,
         "evaluate: weights = no column 'ww'; did you mean 'w'?")
  raises(function() return r:evaluate(f, {at = {x = 1}, weight = "w"}) end,
         "unknown option 'weight'; did you mean 'weights'?")
  local neg = frame_of({{0, 0, 0, 1}, {1, 1, 1, -1}})
  raises(function() return r:evaluate(neg, {at = {x = 1}, weights = "w"}) end,
         "evaluate: weights = 'w': row 2 has the weight -1")
  local miss = frame_of({{0, 0, 0, 1}, {1, 1, 1, ""}})
  raises(function() return r:evaluate(miss, {at = {x = 1}, weights = "w"}) end,
         "row 2 has no weight (missing)")
  local zero = frame_of({{0, 0, 0, 0}, {1, 1, 1, 0}})
  raises(function() return r:evaluate(zero, {at = {x = 1}, weights = "w"}) end,
         "evaluate: weights = 'w': every weight is 0")
  local textw = frame_of({{0, 0, 0, "a"}, {1, 1, 1, "b"}, {1, 0, 1, "c"}})
  raises(function() return r:evaluate(textw, {at = {x = 1}, weights = "w"}) end,
         "weights = 'w' is a column of text")
  local cont = frame_of({{0, 0.5, 0, 1}, {1, 1, 1, 1}})
  raises(function() return r:evaluate(cont, {at = {x = 1}, weights = "w"}) end,
         "evaluate: column 'm' is continuous (row 1 holds 0.5)")
  local gap = frame_of({{0, 0, 0, 1}, {0, 1, 1, 1}, {1, 1, 0, 1}, {1, 1, 1, 1}})
  raises(function() return r:evaluate(gap, {at = {x = 0}}) end,
         "evaluate: no rows with x = 1, m = 0 (needed by P(y | x, m))")
  local nocol = frame_of({{0, 0, 1}}, "x,y,w")
  raises(function() return r:evaluate(nocol, {at = {x = 0}}) end,
         "evaluate: the formula needs the variable 'm'")
end)

-- Regression: the result's box shared its metatable name with the id
-- arrays of g:optimal and g:cheapest, so one of them was collected by the
-- other's __gc (a crash when the garbage collector ran).
test("identify results and the id arrays of other methods collect apart", function()
  local g = graph "z -> x -> y; z -> y"
  for _ = 1, 5 do
    g:identify("x", "y")
    g:optimal("x", "y")
    g:cheapest("x", "y")
  end
  collectgarbage()
  collectgarbage()
  eq(g:identify("x", "y").formula, "P(y | do(x)) = Σ_z P(y | x, z) P(z)")
end)
