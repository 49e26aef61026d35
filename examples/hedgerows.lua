-- hedgerows.lua: does planting hedgerows raise the number of farmland birds?
-- An invented ecology study, end to end: the assumed graph, a model with a
-- known true effect, simulated survey data, and what each adjustment set
-- would conclude.  Run: build/sluice examples/hedgerows.lua  (or make demo)

local g = graph [[
  # woodland nearby makes a farmer likelier to plant hedges and brings birds
  woodland -> hedges -> birds
  woodland -> birds
  # an M-shaped pre-treatment structure: a grant application and a nearby
  # wetland both make a farm likelier to join the agri-environment scheme
  grant -> hedges; grant -> scheme
  wetland -> scheme; wetland -> birds
  # downstream of both: farms with hedges and many birds get featured
  hedges -> featured; birds -> featured
]]
print(g:show())

-- The data-generating model.  The true effect of hedges on birds is 4 more
-- birds per survey.
local m = sem(g, {
  ["woodland -> hedges"] = 0.8, ["woodland -> birds"] = 3,
  ["hedges -> birds"] = 4,
  ["grant -> hedges"] = 1, ["grant -> scheme"] = 1,
  ["wetland -> scheme"] = 1, ["wetland -> birds"] = 2.5,
  ["hedges -> featured"] = 1, ["birds -> featured"] = 0.5,
}, {intercept = {birds = 20}, sd = {birds = 3}})
print("\nThe model:")
print(m)
print("\nTrue effect of hedges on birds: " .. m:effect("hedges", "birds"))

local survey = m:simulate(5000, {seed = 2026})
print("\nSimulated surveys of " .. #survey .. " farms.")

local out = os.getenv("SLUICE_DEMO_OUT") or "build"
-- beside the default candidates, one tempting set: woodland plus the scheme
local c = compare{data = survey, truth = m, treatment = "hedges", outcome = "birds",
                  sets = {{"woodland", "scheme"}}, boot = 200, seed = 1,
                  plot = out .. "/hedgerows-forest.svg"}
print()
print(c)

print([[

What the table teaches:
- With no adjustment, woodland and wetland confound the comparison: farms with
  hedges are the ones near woodland, which have more birds anyway.
- Adjusting for everything measured is worse still: "featured" is a collider of
  hedges and birds, so conditioning on it opens a trail that was closed.
- {woodland, scheme} looks careful but is biased too: the scheme sits in the
  middle of an M (grant -> scheme <- wetland), and adjusting for it opens
  hedges <- grant -> scheme <- wetland -> birds.
- The minimal set {woodland} lands on the truth; the optimal set adds the
  wetland, which does not confound but predicts the outcome, and so gives a
  narrower interval.  The "limit" column is what each set converges to with
  unlimited data: a set's bias does not shrink with more data, only its
  interval does.]])
