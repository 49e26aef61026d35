-- Two-level treatments coded other than 0/1 (numbers, text levels), the
-- level taken as treated (treated =), few-valued numeric treatments, and
-- f:binarize of a categorical column.  The reference is the same estimate
-- on the treatment recoded to 0/1 by hand, whose numbers are checked
-- against statsmodels in tests/oracle/estimate_statsmodels.py and
-- tests/oracle/sandwich_numpy.py; recoding must change nothing else.

local g = graph[[shade -> cover; shade -> yield; cover -> yield]]
local m = sem(g, {["shade -> cover"] = 0.7, ["shade -> yield"] = 1, ["cover -> yield"] = 2},
              {binary = {"cover"}})
local d0 = m:simulate(300, {seed = 11})
local d = d0:with_column("plan", function(r) return r.cover == 1 and 2 or 1 end)
            :with_column("mulched", function(r) return r.cover == 1 and "yes" or "no" end)
            :with_column("side", function(r) return r.cover == 1 and "south" or "north" end)
            :with_column("rows", function(r, i) return i % 4 end)
local base = {data = d, outcome = "yield", set = {"shade"}}
local function est(extra)
  local a = {}
  for k, v in pairs(base) do a[k] = v end
  for k, v in pairs(extra) do a[k] = v end
  return estimate(a)
end

test("a treatment coded 1/2 or yes/no is the 0/1 treatment, its treated level printed", function()
  for _, meth in ipairs({"standardize", "ipw", "aipw"}) do
    local ref = est{treatment = "cover", method = meth}
    for _, t in ipairs({"plan", "mulched", "side"}) do
      local r = est{treatment = t, method = meth}
      eq(r.estimate, ref.estimate, meth .. " " .. t .. " estimate")
      eq(r.se, ref.se, meth .. " " .. t .. " SE")
    end
    eq(ref.treated_level, nil, "0/1 coding prints no levels")
  end
  local r = est{treatment = "plan"}
  eq(r.treated_level, "2"); eq(r.control_level, "1")
  eq(est{treatment = "mulched"}.treated_level, "yes", "'yes' reads as treated")
  eq(est{treatment = "side"}.treated_level, "south", "otherwise the later level")
  eq(tostring(r):find("plan = 2 (control plan = 1; choose with treated =)", 1, true) ~= nil, true,
     "printed")
end)

test("treated = picks the level; the other way round flips the difference", function()
  local ref = est{treatment = "cover"}
  local r = est{treatment = "plan", treated = 1}
  eq(math.abs(r.estimate + ref.estimate) < 1e-12, true, "the difference changes sign")
  eq(r.treated_level, "1")
  eq(est{treatment = "mulched", treated = "no"}.treated_level, "no")
  local r0 = est{treatment = "cover", treated = 0}
  eq(math.abs(r0.estimate + ref.estimate) < 1e-12, true, "treated = 0 of a 0/1 treatment")
  eq(r0.treated_level, "0")
  raises(function() est{treatment = "plan", treated = 3} end,
         "treated = '3' is not a value of 'plan'", "'1' and '2'")
  raises(function() est{treatment = "mulched", treated = "maybe"} end, "'no' and 'yes'")
  raises(function() est{treatment = "rows", treated = 1} end, "two-level treatment", "f:binarize")
  raises(function() est{treatment = "cover", treated = {}} end, "treated =")
end)

test("a numeric treatment with few values is a warning; a text one with more than two an error", function()
  local r = est{treatment = "rows"}
  local said = false
  for _, w in ipairs(r.warnings) do said = said or w:find("takes only 4 distinct values", 1, true) ~= nil end
  eq(said, true, "warned")
  local dd = d:with_column("bed", function(r, i) return ({"a", "b", "c"})[i % 3 + 1] end)
  raises(function() estimate{data = dd, treatment = "bed", outcome = "yield", set = {"shade"}} end,
         "has 3 levels", "f:binarize")
end)

test("f:binarize counts the given levels of a categorical column as 1", function()
  local b = d:binarize("mulched", "yes")
  eq(b.mulched_yes:sum(), d.cover:sum(), "yes as 1")
  local both = d:binarize("side", {"north", "south"}, "any")
  eq(both.any:sum(), #d, "both levels")
  raises(function() d:binarize("mulched", "yse") end, "'yse' is not a level of 'mulched'", "'yes'")
  raises(function() d:binarize("mulched", 1) end, "categorical", "level")
end)
