-- gendocs.lua: docs/functions.md from the help entries (make docs).
local H = require "sluice.help"
local out = {"# sluice functions", "",
             "Generated from lua/sluice/help.lua by `make docs`; do not edit.", ""}
for _, topic in ipairs(H.topics) do
  out[#out + 1] = "## " .. topic[2]
  out[#out + 1] = ""
  for _, e in ipairs(H.entries) do
    if e.topic == topic[1] then
      out[#out + 1] = "### `" .. e.sig .. "`"
      out[#out + 1] = ""
      out[#out + 1] = "Returns " .. e.returns .. "."
      out[#out + 1] = ""
      out[#out + 1] = e.summary
      out[#out + 1] = ""
      out[#out + 1] = "```lua"
      out[#out + 1] = e.example
      out[#out + 1] = "```"
      out[#out + 1] = ""
    end
  end
end
out[#out + 1] = "## Caution"
out[#out + 1] = ""
out[#out + 1] = H.caution
io.write(table.concat(out, "\n"), "\n")
