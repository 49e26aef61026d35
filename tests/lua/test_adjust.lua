-- Trails, separation and adjustment on textbook graphs.  Each graph names
-- its source; statements "from memory" are recalled, not looked up, and
-- the expected values were checked by hand against the definitions.

local function texts(sets)
  local out = {}
  for i, s in ipairs(sets) do out[i] = "{" .. table.concat(s, ",") .. "}" end
  return out
end

-- Confounder and collider (the standard teaching case, e.g. Hernan and
-- Robins, Causal Inference: What If, ch. 7-8, from memory): only the
-- confounder belongs in the set.
local cc = graph "z -> x; z -> y; x -> y; x -> c; y -> c"

test("confounder in, collider out", function()
  same_list(texts(cc:adjust("x", "y")), {"{z}"})
  eq(cc:admissible("x", "y", {"z"}), true)
  local ok, why = cc:admissible("x", "y", {"z", "c"})
  eq(ok, false)
  eq(why[1].kind, "descendant", "c descends from the outcome on the causal path")
  eq(why[1].node, "c")
  local ok2, why2 = cc:admissible("x", "y", {})
  eq(ok2, false)
  eq(why2[1].trail.text, "x <- z -> y", "the open back-door trail")
  eq(tostring(why2[1]), "the back-door trail x <- z -> y is open: no member of the set blocks it")
end)

-- The M-shaped graph (Greenland, Pearl and Robins 1999, Epidemiology 10,
-- "Causal diagrams for epidemiologic research", from memory): m is a
-- pre-treatment collider; adjusting for it opens x <- a -> m <- b -> y.
local mg = graph "a -> x; a -> m; b -> m; b -> y; x -> y"

test("M-bias: the middle node opens a trail", function()
  same_list(texts(mg:adjust("x", "y")), {"{}"})
  local ok, why = mg:admissible("x", "y", {"m"})
  eq(ok, false)
  eq(why[1].trail.text, "x <- a -> m <- b -> y")
  eq(why[1].text:find("the collider 'm' is in the set, which opens it", 1, true) ~= nil, true)
  eq(mg:admissible("x", "y", {"m", "a"}), true, "adding a closes it again")
  eq(mg:admissible("x", "y", {"m", "b"}), true)
  local t = mg:trails("x", "y", {given = {"m"}})
  eq(#t, 2)
  eq(t[2].text, "x <- a -> m <- b -> y"); eq(t[2].open, true); eq(t[2].kind, "backdoor")
  local t0 = mg:trails("x", "y")
  eq(t0[2].open, false); eq(t0[2].blocked_at, "m"); eq(t0[2].why, "collider")
end)

-- Pearl 2009, Causality (2nd ed.), section 3.3.1, Figure 3.4 (from memory;
-- the edge list is our reconstruction, and it satisfies the three statements
-- made there): {x3, x4} and {x4, x5} meet the back-door criterion, {x4}
-- alone does not.
local p34 = graph [[
  x1 -> x3; x1 -> x4; x2 -> x4; x2 -> x5
  x3 -> xi; x4 -> xi; x4 -> xj; x5 -> xj
  xi -> x6 -> xj
]]

test("Pearl's back-door example", function()
  eq(p34:backdoor("xi", "xj", {"x3", "x4"}), true)
  eq(p34:backdoor("xi", "xj", {"x4", "x5"}), true)
  local ok, why = p34:backdoor("xi", "xj", {"x4"})
  eq(ok, false)
  eq(why[1].trail.text:find("x4 <- x2", 1, true) ~= nil, true, "the trail through the collider x4")
  local ok6, why6 = p34:backdoor("xi", "xj", {"x4", "x5", "x6"})
  eq(ok6, false)
  eq(why6[1].kind, "descendant of treatment")
  -- by hand: the minimal sets are {x3,x4}, {x4,x5}, {x1,x4}, {x2,x4}
  same_list(texts(p34:adjust("xi", "xj")), {"{x1,x4}", "{x2,x4}", "{x3,x4}", "{x4,x5}"})
end)

-- A mediator must not be adjusted for (any introductory text; the
-- definition of a proper causal path).
local med = graph "x -> m -> y; x -> y"

test("a mediator is forbidden, with its path", function()
  local ok, why = med:admissible("x", "y", "m")
  eq(ok, false)
  eq(why[1].kind, "mediator")
  eq(why[1].trail.text, "x -> m -> y")
  same_list(texts(med:adjust("x", "y")), {"{}"})
end)

-- Hidden confounding: no adjustment set exists (van der Zander et al. 2019,
-- the criterion's condition on open non-causal paths).
test("no valid set under a hidden confounder", function()
  local h = graph "hidden u; u -> x; u -> y; x -> m -> y; w -> x"
  local sets = h:adjust("x", "y")
  eq(#sets, 0)
  eq(sets.none[1].trail.text, "x <- u -> y")
  eq(tostring(sets):find("no valid adjustment set exists", 1, true), 1)
  local b = graph "x <-> y; x -> y"
  eq(#b:adjust("x", "y"), 0)
  local ok, why = h:admissible("x", "y", {"u"})
  eq(ok, false); eq(why[1].kind, "hidden")
end)

-- The optimal set O(X,Y) = pa(cn(X,Y)) \ forb(X,Y) (Henckel, Perkovic and
-- Maathuis 2022, JRSS B 84, definition 3.9); computed by hand here:
-- cn = {m, y}, pa(cn) = {x, c, m, b}, forb = {x, m, y}.
test("optimal set by its definition", function()
  local g = graph "a -> x; x -> m -> y; c -> m; b -> y; a -> b"
  same_list(g:optimal("x", "y"), {"b", "c"})
  local h = graph "hidden u; u -> y; u -> x; x -> y"
  local o, why = h:optimal("x", "y")
  eq(o, nil)
  eq(why[1].kind, "hidden"); eq(why[1].node, "u")
  local none, why2 = graph("x -> z; y -> z"):optimal("x", "y")
  eq(none, nil); eq(why2[1].kind, "no causal path")
end)

test("cheapest set follows the costs", function()
  -- two back-door trails through a and through b, or both through s
  local g = graph "s -> a -> x; s -> b -> y; x -> y"
  local set, cost = g:cheapest("x", "y")
  eq(#set, 1); eq(cost, 1.0)
  local set2, cost2 = g:cheapest("x", "y", {a = 5, b = 5, s = 2})
  same_list(set2, {"s"}); eq(cost2, 2.0)
  local set3 = g:cheapest("x", "y", {s = 9, a = 1, b = 3})
  same_list(set3, {"a"})
end)

test("separation and its witness", function()
  eq(mg:separated("a", "b"), true)
  local ok, w = mg:separated("a", "b", "m")
  eq(ok, false)
  eq(w.text, "a -> m <- b"); eq(w.open, true)
  eq(cc:separated("z", "c", {"x", "y"}), true)
end)

test("trail limit and count", function()
  local g = graph "x -> a, b, c, d; a, b, c, d -> y; a -> b -> c -> d"
  eq(g:count_trails("x", "y"), #g:trails("x", "y"))
  local t = g:trails("x", "y", {limit = 3})
  eq(#t, 3); eq(t.truncated, 3)
  eq(tostring(t):find("stopped after 3 trails", 1, true) ~= nil, true)
end)

test("bad input is a clear error", function()
  raises(function() return cc:adjust("x", "x") end, "'x' is both a treatment and an outcome")
  raises(function() return cc:adjust({}, "y") end, "the treatment set is empty")
  raises(function() return cc:adjust("xx", "y") end, "did you mean 'x'?")
  local h = graph "hidden u; u -> x; u -> y; x -> y; w -> x"
  raises(function() return h:adjust("u", "y") end, "'u' is hidden: it cannot be a treatment")
  raises(function() return h:adjust("x", "y", {require = "u"}) end, "'u' is hidden: it cannot be required")
  raises(function() return med:adjust("x", "y", {require = "m"}) end, "'m' cannot be required")
  raises(function() return cc:adjust("x", "y", {require = "z", forbid = "z"}) end,
         "'z' is both required and forbidden")
  raises(function() return cc:separated("x", "y", "x") end, "'x' is in more than one of the sets")
  raises(function() return cc:cheapest("x", "y", {z = -1}) end,
         "cheapest: the cost of 'z' = -1 must be a number from 0 to 1e15")
  raises(function() return cc:trails("x", "y", {limit = 0}) end,
         "trails: limit = 0 must be a whole number of at least 1")
end)

-- Issue 9: option values and names were checked by luaL_check* on stack
-- positions ("bad argument #-2 to 'trails' (number has no integer
-- representation)", "bad argument #5"), or not at all (a typo was ignored).
test("options: every bad value names the function and the option", function()
  raises(function() return cc:trails("x", "y", {limit = 2.5}) end,
         "trails: limit = 2.5 must be a whole number of at least 1")
  raises(function() return cc:trails("x", "y", {limit = 0 / 0}) end, "trails: limit = nan must be")
  raises(function() return cc:trails("x", "y", {limit = "3"}) end, 'trails: limit = "3" must be')
  raises(function() return cc:adjust("x", "y", {limit = 1 / 0}) end, "adjust: limit = inf must be")
  raises(function() return cc:adjust("x", "y", {limit = -2}) end, "adjust: limit = -2 must be")
  eq(#cc:adjust("x", "y", {limit = 1.0}), 1, "an integral float is a whole number")
  raises(function() return cc:trails("x", "y", {limt = 3}) end,
         "trails: unknown option 'limt'; did you mean 'limit'?")
  raises(function() return cc:adjust("x", "y", {forbidden = "z"}) end,
         "adjust: unknown option 'forbidden'; did you mean 'forbid'?")
  raises(function() return cc:adjust("x", "y", {"z"}) end,
         "adjust: unknown option 1 (options: forbid, require, limit)")
  raises(function() return cc:trails("x", "y", 5) end, "trails: the options are a table")
  raises(function() return cc:trails("x", "y", {given = "zz"}) end,
         "trails: given: no node 'zz'", "did you mean 'z'?")
  raises(function() return cc:trails("x", "y", {given = {"z", 3}}) end,
         "trails: given = item 2 is 3, not a node name")
  raises(function() return cc:adjust("x", "y", {require = true}) end,
         "adjust: require = must be a node name or a list of names, got true")
  raises(function() return cc:cheapest("x", "y", {z = 0 / 0}) end, "the cost of 'z' = nan")
  raises(function() return cc:cheapest("x", "y", {z = 1 / 0}) end, "the cost of 'z' = inf")
  raises(function() return cc:cheapest("x", "y", {z = "1"}) end, "the cost of 'z' = \"1\"")
  raises(function() return cc:cheapest("x", "y", {zz = 1}) end, "cheapest: costs: no node 'zz'")
  raises(function() return cc:cheapest("x", "y", 3) end, "cheapest: costs must be a table")
  raises(function() return cc:trails({}, "y") end, "bad argument #1 to 'g:trails' (the treatment set is empty)")
  raises(function() return cc:trails("x", {}) end, "bad argument #2 to 'g:trails' (the outcome set is empty)")
end)

test("forbid and require", function()
  same_list(texts(p34:adjust("xi", "xj", {forbid = "x3"})), {"{x1,x4}", "{x2,x4}", "{x4,x5}"})
  -- minimal among the sets that hold x1 and x5 respectively, by hand
  same_list(texts(p34:adjust("xi", "xj", {require = "x1"})), {"{x1,x4}"})
  same_list(texts(p34:adjust("xi", "xj", {require = "x5"})), {"{x4,x5}"})
  raises(function() return p34:adjust("xi", "xj", {require = "x6"}) end,
         "'x6' cannot be required: it lies on a causal path")
end)
