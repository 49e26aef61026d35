-- extension.lua: do advisory visits from the extension service raise the
-- harvest of the farms they visit?  An invented agriculture study in which
-- no adjustment set exists (the farmer's skill is never measured), and the
-- two other routes recover the truth: the front-door route through what the
-- visit changes (sowing a cover crop) and an instrument (the lottery that
-- allots the visits).  Run: build/sluice examples/extension.lua (or make demo)

local g = graph [[
  # skilled farmers ask for visits more often and harvest more anyway
  hidden skill
  skill -> visit, harvest
  # visits are scarce: a lottery among the applicants allots them
  lottery -> visit
  # a visit works only through the advice taken: a cover crop is sown
  visit -> cover -> harvest
]]
print(g:show())

print("\nAdjustment cannot work here:")
print(g:adjust("visit", "harvest"))
print("\nWhat the graph does allow:")
print(g:identify("visit", "harvest"))
print("\nFront-door sets:", g:frontdoor("visit", "harvest"))
print("Instruments:", g:instruments("visit", "harvest"))

-- The data-generating model.  A visit is recorded as 0/1 (binarized at 0);
-- the true effect of a visit on the harvest (tonnes per hectare) is what
-- m:effect reports for the binarized model.
local m = sem(g, {
  ["skill -> visit"] = 0.9, ["skill -> harvest"] = 1.2,
  ["lottery -> visit"] = 1.0,
  ["visit -> cover"] = 1.5, ["cover -> harvest"] = 0.6,
}, {intercept = {harvest = 6}, sd = {harvest = 0.5}})
local farms = m:simulate(20000, {seed = 2026, binarize = {visit = 0, lottery = 0}})
print("\nSimulated " .. #farms .. " farms.")

-- Each route, then all of them side by side against the truth.
print()
print(estimate{data = farms, treatment = "visit", outcome = "harvest", graph = g,
               method = "frontdoor"})
print()
print(estimate{data = farms, treatment = "visit", outcome = "harvest", graph = g,
               method = "iv"})

local out = os.getenv("SLUICE_DEMO_OUT") or "build"
local c = compare{data = farms, truth = m, treatment = "visit", outcome = "harvest",
                  graph = g, routes = true, boot = 100, seed = 1,
                  plot = out .. "/extension-routes.svg"}
print()
print(c)

print([[

What the table teaches:
- Comparing visited and unvisited farms, with or without the measured
  covariates, is biased: skilled farmers both ask for visits and harvest more,
  and skill is not in the data.
- The front-door route uses the cover crop: the visit's effect on sowing it
  (not confounded: skill does not choose the cover crop) times the cover
  crop's effect on the harvest among farms with the same visit status.
- The lottery is an instrument: it moves visits and touches the harvest only
  through them.  Its estimate is wider, and in general it is the effect for
  the farms whose visit the lottery decided (the compliers).
- Both routes rest on the graph: a direct path from visit to harvest, or
  skill reaching the lottery, would break them, and the data cannot tell.]])
