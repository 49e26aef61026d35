-- woodland.lua: does moss on the forest floor raise the number of snails?
-- An invented ecology survey in which the analyst's first graph misses an
-- edge: the data contradict two of its implications, the test points at
-- the missing edge, and the corrected graph passes.  The first graph also
-- accepted an adjustment set, {rainfall}, that the corrected graph rejects,
-- and that set misses the truth.  Then: how strong would a confounder the
-- graph still misses have to be?
-- Run: build/sluice examples/woodland.lua  (or make demo)

-- The world as it is (only the simulation knows it): the canopy shades the
-- plot and also keeps moss moist.
local world = graph [[
  rainfall -> moss -> snails
  rainfall -> shade -> snails
  canopy -> shade
  canopy -> moss
]]
local m = sem(world, {["moss -> snails"] = 0.5}, {default = 0.6})
local plots = m:simulate(3000, {seed = 5})
print("Surveyed " .. #plots .. " woodland plots; true effect of moss on snails: "
      .. m:effect("moss", "snails"))

-- The analyst's first graph: the canopy only shades.
local first = world:without("canopy -> moss")
print("\nThe first graph:")
print(first)
print("\nWhat it claims, tested on the survey:")
local t = first:test(plots, {plot = (os.getenv("SLUICE_DEMO_OUT") or "build")
                                     .. "/woodland-tests.svg"})
print(t)

-- The test names canopy -> moss among the edges that would remove the
-- contradiction; the arrow's direction is the analyst's knowledge (moss does
-- not grow trees), and the corrected graph passes.
local second = first:with("canopy -> moss")
print("\nThe corrected graph, tested again:")
print(second:test(plots))

print("\nMinimal adjustment sets for moss -> snails under the first graph:")
print(first:adjust("moss", "snails"))
print("and under the corrected graph:")
print(second:adjust("moss", "snails"))
local c = compare{data = plots, truth = m, treatment = "moss", outcome = "snails",
                  graph = second, sets = {{"rainfall"}}, boot = 100, seed = 1}
print()
print(c)

-- How strong would a confounder that even the corrected graph misses have
-- to be to explain the estimate away?  (Cinelli and Hazlett 2020)
print()
print(sensitivity{data = plots, treatment = "moss", outcome = "snails",
                  set = {"canopy", "rainfall"}, benchmark = {"rainfall"}})

print([[

What this teaches:
- A graph makes claims that data can check: each missing edge says two
  columns are independent given some others.  The first graph's claim that
  canopy and moss are independent fails badly, and so does a second claim
  that only holds if canopy reaches moss through shade alone.
- The test proposes edges that would remove each contradiction; which one is
  right is for the analyst to decide (direction cannot be read off these
  tests).
- The cost of the missing edge: the first graph accepts {rainfall}, which
  leaves moss <- canopy -> shade -> snails open; the comparison shows that
  set about 30% off the truth, while the sets of the corrected graph land on
  it.
- Passing the tests does not prove the corrected graph: a confounder that
  leaves no trace among the measured columns would pass them too, which is
  why the sensitivity analysis comes last.]])
