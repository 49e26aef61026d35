-- bench_sem.lua: simulate ROWS rows of a 20-node linear model (a chain of
-- layers, 2 parents per node) on THREADS threads (0 or absent: every
-- core), then print the wall time of the simulation and checksums (the
-- sums of the columns, exactly, in hexadecimal: equal for equal frames);
-- with "compare", time compare{} with 5 candidate sets and 200 bootstrap
-- replicates on 10^5 rows.
local what, rows, threads = arg[1], tonumber(arg[2]), tonumber(arg[3] or "0")
local lines, coefs = {}, {}
for i = 3, 20 do
  for _, j in ipairs({i - 1, i - 2}) do
    local e = "v" .. j .. " -> v" .. i
    lines[#lines + 1] = e
    coefs[e] = 0.3 + 0.01 * ((i * 7 + j) % 20)
  end
end
local g = graph(table.concat(lines, "\n"))
local m = sem(g, coefs)
local clock = os.getenv("SLUICE_NOW") and function() return tonumber(io.popen("date +%s.%N"):read("l")) end
if what == "simulate" then
  local t0 = clock()
  local d = m:simulate(rows, {seed = 1, threads = threads})
  local t1 = clock()
  local sums = {}
  for _, v in ipairs(d:names()) do sums[#sums + 1] = string.format("%a", d[v]:sum()) end
  print(string.format("seconds=%.3f rows=%d cols=%d mean_v20=%.6f sums=%s", t1 - t0, #d, #d:names(),
                      d.v20:mean(), table.concat(sums, ",")))
else
  local d = m:simulate(rows, {seed = 1})
  local t0 = clock()
  local c = compare{data = d, truth = m, treatment = "v10", outcome = "v12",
                    sets = {{"v8", "v9"}, {"v9"}, {"v7", "v8", "v9"}}, boot = 200, seed = 1}
  local t1 = clock()
  print(string.format("seconds=%.3f sets=%d", t1 - t0, #c))
end
