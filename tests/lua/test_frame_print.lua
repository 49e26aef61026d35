-- How frames, columns and summaries print: the column types in words on
-- the frame's first line (numbers: ...; categories: ...), never as a row
-- of type tags under the header, and no dimension line under the table.
-- Expected cells are those of tests/data/orchard.csv as written in the
-- file; the summary's figures are checked in test_frame.lua (pandas).
local D = "tests/data/"

local function lines_of(text)
  local out = {}
  for l in (text .. "\n"):gmatch("(.-)\n") do out[#out + 1] = l end
  return out
end

-- No line of text may be a row of type tags or a dimension footer.
local function no_borrowed_layout(text, what)
  for _, l in ipairs(lines_of(text)) do
    eq(l:find("<%a+>") == nil, true, what .. ": a type tag in " .. l)
    eq(l:find("%d+ rows?,? *[x×,] *%d+ columns?") == nil, true, what .. ": a dimension line " .. l)
  end
end

test("tostring(f): the types in words on the first line, then the rows", function()
  local f = read_csv(D .. "orchard.csv")
  local text = tostring(f)
  local l = lines_of(text)
  eq(l[1], "data frame, 8 rows; numbers: plot, rain, yield, pests; categories: variety")
  eq(l[2]:match("^row%s+plot%s+variety%s+rain%s+yield%s+pests$") ~= nil, true, l[2])
  eq(l[3]:match("^%s*1%s+1%s+gala%s+71.5%s+12.25%s+3$") ~= nil, true, l[3])
  -- row 2 of the file: 2,fuji,64,10.5,NA (pests missing)
  eq(l[4]:match("^%s*2%s+2%s+fuji%s+64%s+10.5%s+NA$") ~= nil, true, l[4])
  eq(#l, 10, "the line of types, the header and 8 rows")
  eq(l[10]:match("^%s*8%s+8%s+fuji%s+59.75%s+10.25%s+NA$") ~= nil, true, l[10])
  no_borrowed_layout(text, "tostring(f)")
end)

test("tostring(f): a long frame says how many rows it shows", function()
  local f = read_csv(D .. "orchard.csv")
  local path = os.tmpname()
  local out = assert(io.open(path, "w"))
  out:write("k,half\n")
  for i = 1, 20 do out:write(i, ",", i / 2, "\n") end
  out:close()
  local f20 = read_csv(path)
  os.remove(path)
  local text = tostring(f20)
  local l = lines_of(text)
  eq(l[1]:find("^data frame, 20 rows %(the first 10 shown%); ") ~= nil, true, l[1])
  eq(#l, 12, "the line of types, the header and 10 rows")
  eq(l[12]:match("^%s*10%s") ~= nil, true, "the last line is row 10: " .. l[12])
  no_borrowed_layout(text, "a long frame")
  eq(lines_of(tostring(f:head(1)))[1]:find("^data frame, 1 row; ") ~= nil, true, "one row")
  local empty = tostring(f:head(0))
  eq(empty, "data frame, 0 rows; numbers: plot, rain, yield, pests; categories: variety\n"
            .. "row  plot  variety  rain  yield  pests", "no rows: the header alone")
end)

test("tostring(f): the line of types wraps at 80 columns", function()
  local f = read_csv(D .. "orchard.csv")
  for i = 1, 14 do
    f = f:with_column(string.format("measurement_%02d", i), function(_, r) return r end)
  end
  local l = lines_of(tostring(f))
  eq(l[1], "data frame, 8 rows; numbers: plot, rain, yield, pests, measurement_01,")
  local k = 2
  while l[k]:sub(1, 2) == "  " do
    eq(#l[k] <= 80, true, "line " .. k .. " fits: " .. l[k])
    k = k + 1
  end
  eq(k > 2, true, "the types go on over more lines")
  eq(l[k - 1]:find("; categories: variety$") ~= nil, true, l[k - 1])
  eq(l[k]:find("^row%s+plot%s+variety") ~= nil, true, "then the header: " .. l[k])
  -- every name is listed once, in the order of the frame
  local joined = table.concat(l, " ", 1, k - 1)
  for i = 1, 14 do
    local name = string.format("measurement_%02d", i)
    local _, n = joined:gsub(name, "")
    eq(n, 1, name .. " once")
  end
end)

test("a column and a summary say the type in the same words", function()
  local f = read_csv(D .. "orchard.csv")
  eq(tostring(f.yield),
     "yield (number, 8 rows, 2 missing): 12.25, 10.5, NA, 8.75, 11, NA, 9.5, 10.25")
  eq(tostring(f.variety),
     "variety (category, 8 rows, 0 missing): gala, fuji, gala, braeburn, fuji, gala, braeburn, fuji")
  local text = tostring(f:summary())
  local l = lines_of(text)
  eq(l[1]:match("^column%s+type%s+n%s+missing%s+levels%s+mean") ~= nil, true, l[1])
  eq(l[2]:match("^plot%s+number%s+8%s+0%s+4.5%s") ~= nil, true, l[2])
  eq(l[3]:match("^variety%s+category%s+8%s+0%s+3$") ~= nil, true, l[3])
  no_borrowed_layout(text, "f:summary()")
end)
