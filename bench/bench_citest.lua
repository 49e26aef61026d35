-- bench_citest.lua: the g:test benchmark of bench/run.sh (section 15), run
-- by the shell (build/sluice bench/bench_citest.lua MODE DIR).
--
--   gen DIR N K   a linear structural model on a fixed graph of 40 nodes
--                 (each node i > 1 has up to three parents among the six
--                 before it, coefficients 0.3 to 0.6), N rows simulated
--                 (seed 15) into DIR/data.csv, and the first K of its
--                 implications into DIR/imps.txt, one per line: a b given...
--   read DIR      read the file only (the time to subtract)
--   test DIR      read it and run g:test on the K implications
--
-- test prints one line: tested=, contradicted=, r1= (the first partial r),
-- r_sum= (the sum of all of them, to compare with numpy).

local mode, dir = arg[1], arg[2]
local nodes, edges, coef = {}, {}, {}
for i = 1, 40 do nodes[i] = "v" .. i end
for i = 2, 40 do
  for k = 1, 3 do
    local j = i - ((i * 7 + k * 5) % 6) - 1         -- a fixed pattern of parents
    if j >= 1 and not coef[nodes[j] .. " -> " .. nodes[i]] then
      edges[#edges + 1] = nodes[j] .. " -> " .. nodes[i]
      coef[edges[#edges]] = 0.3 + 0.1 * ((i + k) % 4)
    end
  end
end
local g = graph(table.concat(nodes, "; ") .. "; " .. table.concat(edges, "; "))

local function implications()
  local list = {}
  for line in io.lines(dir .. "/imps.txt") do
    local w = {}
    for s in line:gmatch("%S+") do w[#w + 1] = s end
    list[#list + 1] = {a = w[1], b = w[2], given = {table.unpack(w, 3)}}
  end
  return list
end

if mode == "gen" then
  local n, k = math.tointeger(tonumber(arg[3])), math.tointeger(tonumber(arg[4]))
  sem(g, coef):simulate(n, {seed = 15}):write_csv(dir .. "/data.csv")
  local f = assert(io.open(dir .. "/imps.txt", "w"))
  local all = g:implications()
  for i = 1, math.min(k, #all) do
    f:write(all[i].a, " ", all[i].b, " ", table.concat(all[i].given, " "), "\n")
  end
  f:close()
  print("implications=" .. math.min(k, #all))
elseif mode == "read" then
  read_csv(dir .. "/data.csv")
elseif mode == "test" then
  local f = read_csv(dir .. "/data.csv")
  local t = g:test(f, {implications = implications()})
  local hits, sum = 0, 0
  for _, r in ipairs(t) do
    if r.verdict == "contradicted" then hits = hits + 1 end
    sum = sum + r.effect
  end
  print(string.format("tested=%d contradicted=%d r1=%.17g r_sum=%.17g", #t, hits, t[1].effect, sum))
else
  io.stderr:write("usage: bench_citest.lua gen DIR N K | read DIR | test DIR\n")
  os.exit(2)
end
