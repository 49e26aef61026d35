-- test_compare.lua: compare{}'s truth (exact or Monte Carlo, said which),
-- and its forest plots, text and picture, with long set labels shown whole.

local function tmpname(ext)
  local p = os.tmpname()
  os.remove(p)
  return p .. ext
end

local function slurp(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  return s
end

-- The graph z -> x -> y, z -> y with x binary: the effect of x on y.
local function binary_model(opts)
  local g = graph "z -> x -> y; z -> y"
  return sem(g, {["z -> x"] = 0.8, ["x -> y"] = 1.5, ["z -> y"] = 0.7}, opts), g
end

-- Issue 12: a binarized treatment with a linear outcome printed "Monte
-- Carlo, SE 0.0000"; its effect is the same in every unit, so it is exact.
test("compare calls a truth exact when every draw gives the same effect", function()
  local m = binary_model({binarize = {x = 0}})
  local c = compare{data = m:simulate(300, {seed = 2}), truth = m, treatment = "x",
                    outcome = "y", boot = 0}
  -- y = 1.5 x + 0.7 z + e: setting x to 1 rather than 0 adds the path
  -- coefficient 1.5 to y in every unit (Wright 1934, path tracing)
  eq(c.truth, 1.5, "the truth")
  eq(c.truth_se, nil, "no SE for an exact value")
  eq(c.truth_how, "exact")
  local head = tostring(c):match("^[^\n]*")
  eq(head:find("truth 1.5000 (exact", 1, true) ~= nil, true, "said exact: " .. head)
  eq(head:find("Monte Carlo", 1, true), nil, "not called Monte Carlo: " .. head)
  eq(head:find("SE", 1, true), nil, "no SE shown: " .. head)
end)

test("compare's Monte Carlo truth agrees with the probit closed form", function()
  -- x binary (logistic), y binarized at 0: y = 1 when 1.5 x + 0.7 z + e > 0
  -- with z, e independent N(0, 1), so P(y = 1 | do(x)) = Phi(1.5 x / sqrt(1.49))
  -- (the latent-threshold form of the probit model). The effect
  -- Phi(1.5 / sqrt(1.49)) - 1/2 = 0.39043557717827904 by
  -- scipy.stats.norm.cdf(1.5 / math.sqrt(1.49)) - 0.5 (scipy 1.10).
  local m = binary_model({binary = {"x"}, binarize = {y = 0}})
  local c = compare{data = m:simulate(400, {seed = 5}), truth = m, treatment = "x",
                    outcome = "y", boot = 0, draws = 100000, seed = 3}
  eq(c.truth_how, "monte carlo")
  eq(math.abs(c.truth - 0.39043557717827904) < 4 * c.truth_se, true,
     string.format("truth %.5f within 4 SE (%.5f) of 0.39044", c.truth, c.truth_se))
  -- CRN draws of a difference of indicators: SE near sqrt(0.39 * 0.61 / 1e5) at most
  eq(c.truth_se > 0.0005 and c.truth_se < 0.0016, true, "SE " .. c.truth_se)
  local head = tostring(c):match("^[^\n]*")
  eq(head:find(string.format("truth %.4f (Monte Carlo, 100000 draws, SE %.4f)", c.truth,
                             c.truth_se), 1, true) ~= nil, true, head)
  -- the same seed, the same truth; the default number of draws is 200000
  local c2 = compare{data = m:simulate(400, {seed = 5}), truth = m, treatment = "x",
                     outcome = "y", boot = 0, draws = 100000, seed = 3}
  eq(c2.truth, c.truth, "reproducible")
  local c3 = compare{data = m:simulate(400, {seed = 5}), truth = m, treatment = "x",
                     outcome = "y", boot = 0}
  eq(tostring(c3):find("200000 draws", 1, true) ~= nil, true, "the default draws")
end)

test("compare checks draws =", function()
  local m = binary_model({binary = {"x"}, binarize = {y = 0}})
  local d = m:simulate(100, {seed = 1})
  raises(function() return compare{data = d, truth = m, treatment = "x", outcome = "y", draws = 1.5} end,
         "compare: draws = 1.5 must be a whole number from 2 to 100000000")
  raises(function() return compare{data = d, truth = m, treatment = "x", outcome = "y", draws = 1} end,
         "compare: draws = 1 must be")
  raises(function() return compare{data = d, truth = 0.4, graph = m:graph(), treatment = "x",
                                   outcome = "y", draws = 100} end,
         "compare: draws = sets the Monte Carlo truth of truth = a model")
end)

-- ---- long labels ----

local long_graph = [[x -> y; "a very long covariate name" -> x, y
                     "another long covariate name here" -> x, y; c -> y]]
local long_sets = {'{"a very long covariate name", "another long covariate name here", c}',
                   '{"a very long covariate name", "another long covariate name here"}'}

test("the text forest shows long set labels whole", function()
  local g = graph(long_graph)
  local m = sem(g, {["x -> y"] = 1}, {default = 0.5})
  local c = compare{data = m:simulate(300, {seed = 1}), truth = m, treatment = "x",
                    outcome = "y", boot = 0}
  local text = tostring(c)
  local forest = text:match("\n\n(  {} [^\n]*|.-)\n  %* estimate")
  eq(forest ~= nil, true, "the forest plot is found")
  eq(forest:find("...", 1, true), nil, "no label is cut")
  -- each label read back from its lines (joined at the breaks) is whole
  local joined = forest:gsub("\n  ", " ")
  for _, s in ipairs(long_sets) do
    eq(joined:find(s, 1, true) ~= nil, true, "whole label " .. s)
  end
  -- no line of the forest is wider than the label column plus the plot
  for line in forest:gmatch("[^\n]+") do
    eq(utf8.len(line) <= 2 + 36 + 2 + 44, true, "line width " .. utf8.len(line))
  end
  -- the wrapping breaks between names, never inside a quoted one
  same_list(require("sluice.compare").wrap('{"a b c", d, e}', 9), {'{"a b c",', "d, e}"}, "wrap")
end)

-- The advance widths of a TrueType font, read from its cmap (format 4) and
-- hmtx tables as the OpenType specification lays them out; em units.
local function font_widths(path)
  local f = io.open(path, "rb")
  if not f then return nil end
  local d = f:read("a")
  f:close()
  local tables = {}
  for i = 0, string.unpack(">I2", d, 5) - 1 do
    local tag, _, off = string.unpack(">c4I4I4", d, 13 + 16 * i)
    tables[tag] = off + 1
  end
  local upem = string.unpack(">I2", d, tables.head + 18)
  local nhm = string.unpack(">I2", d, tables.hhea + 34)
  local cm, sub = tables.cmap, nil
  for i = 0, string.unpack(">I2", d, cm + 2) - 1 do
    local pid, eid, off = string.unpack(">I2I2I4", d, cm + 4 + 8 * i)
    if pid == 3 and eid == 1 then sub = cm + off end
  end
  local seg = string.unpack(">I2", d, sub + 6) // 2
  local function at(k, i) return sub + 14 + (k * seg + i) * 2 + (k > 0 and 2 or 0) end
  return function(c)
    for i = 0, seg - 1 do
      local stop, start = string.unpack(">I2", d, at(0, i)), string.unpack(">I2", d, at(1, i))
      if start <= c and c <= stop then
        local delta, roff = string.unpack(">i2", d, at(2, i)), string.unpack(">I2", d, at(3, i))
        local gid
        if roff == 0 then gid = (c + delta) & 0xffff
        else
          gid = string.unpack(">I2", d, at(3, i) + roff + 2 * (c - start))
          if gid ~= 0 then gid = (gid + delta) & 0xffff end
        end
        if gid == 0 then return 1 end   -- not in the face: another face draws it
        return string.unpack(">I2", d, tables.hmtx + 4 * math.min(gid, nhm - 1)) / upem
      end
    end
    return 1
  end
end

-- Every <text> of an SVG written by PLplot: x, y (page coordinates, y
-- down), anchor, font size and the text with its character references read.
local function svg_texts(svg)
  local out = {}
  for attrs, body in svg:gmatch("<text(.-)>(.-)</text>") do
    local e, f = attrs:match("matrix%([^ ]+ [^ ]+ [^ ]+ [^ ]+ ([^ ]+) ([^ )]+)%)")
    local text = body:gsub("<[^>]*>", ""):gsub("&#x(%x+);", function(h)
      return utf8.char(tonumber(h, 16)) end):gsub("&amp;", "&"):gsub("&lt;", "<"):gsub("&gt;", ">")
    out[#out + 1] = {x = tonumber(e), y = tonumber(f), anchor = attrs:match('text%-anchor="(%w+)"'),
                     size = tonumber(attrs:match('font%-size="([%d.]+)"')), text = text}
  end
  return out
end

test("the forest picture holds every set label whole inside its frame", function()
  local width_of = font_widths("/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf")
  if not width_of then print("  skipped: no DejaVuSans.ttf to measure text"); return end
  local huge = "a covariate whose name is far too long to fit in any label column of a forest plot"
  local g = graph(long_graph .. [[; "ẞtraße ⊥ naïve" -> y; "]] .. huge .. [[" -> y]])
  local m = sem(g, {["x -> y"] = 1}, {default = 0.5})
  local path = tmpname(".svg")
  local c = compare{data = m:simulate(300, {seed = 1}), truth = m, treatment = "x", outcome = "y",
                    boot = 0, plot = path, sets = {{"c", "ẞtraße ⊥ naïve"}, {huge}}}
  local svg = slurp(path)
  os.remove(path)
  local w, h = svg:match('viewBox="0 0 ([%d.]+) ([%d.]+)"')
  w, h = tonumber(w), tonumber(h)
  local texts = svg_texts(svg)
  eq(#texts > 8, true, "texts found")
  for _, t in ipairs(texts) do
    local em = 0
    for _, cp in utf8.codes(t.text) do em = em + width_of(cp) end
    local len = em * t.size
    local left = t.anchor == "end" and t.x - len or t.anchor == "middle" and t.x - len / 2 or t.x
    eq(left >= 0 and left + len <= w, true,
       string.format("%q spans %.1f to %.1f of 0 to %g", t.text, left, left + len, w))
    eq(t.y >= 0 and t.y <= h, true, string.format("%q at height %.1f of %g", t.text, t.y, h))
  end
  -- each row's label: the lines right-aligned at one x, read top to bottom
  local labels = {}
  for i, r in ipairs(c) do labels[i] = r.set_text .. (r.valid and "" or " (invalid)") end
  local right = {}
  for _, t in ipairs(texts) do if t.anchor == "end" then right[#right + 1] = t end end
  table.sort(right, function(a, b) return a.y > b.y end)   -- y up: the first row is highest
  local rows, i = {}, 1
  while i <= #right do   -- lines of one label are a line apart; rows are further
    local text, y = right[i].text, right[i].y
    while right[i + 1] and y - right[i + 1].y < 1.5 * right[i].size do
      i = i + 1
      text, y = text .. " " .. right[i].text, right[i].y
    end
    rows[#rows + 1] = text
    i = i + 1
  end
  same_list(rows, labels, "every label, whole, in order")
end)
