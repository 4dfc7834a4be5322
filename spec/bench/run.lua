-- The side-by-side benchmark (`make bench`): each comparison runs in this
-- one process, round after round (A B A B), median of B.rounds rounds; one
-- line "bench NAME ratio X" per comparison (X = peer time / segwise time),
-- then a markdown table, also written to spec/bench/RESULTS.md.
-- Usage: lua5.4 spec/bench/run.lua [section ...]   (default: all sections)
package.path = "./spec/bench/?.lua;" .. package.path
local B = require "benchlib"

local sections = { "eval", "memory", "sweep", "ladder", "capacity", "fit" }
local chosen = {}
if #arg > 0 then
  for _, s in ipairs(arg) do chosen[s] = true end
else
  for _, s in ipairs(sections) do chosen[s] = true end
end

local started = os.time()
B.setup()
-- A failing section (a peer missing, answers that disagree) is reported and
-- the others still run; the exit status says so at the end.
local failed = {}
for _, s in ipairs(sections) do
  if chosen[s] then
    local t0 = os.time()
    local ok, err = xpcall(function() require(s)(B) end, debug.traceback)
    if not ok then
      failed[#failed + 1] = s
      B.note(("section %s failed: %s"):format(s, tostring(err):match("[^\n]*")))
      io.stderr:write(("bench: section %s failed: %s\n"):format(s, tostring(err)))
    end
    io.stderr:write(("bench: section %s took %d s\n"):format(s, os.time() - t0))
  end
end
B.cleanup()

local machine = B.machine()
local _, gslv = B.sh("pkg-config --modversion gsl")
machine.gsl = gslv:gsub("%s+$", "")
local date = os.date("!%Y-%m-%d %H:%M UTC")
B.note(("whole run: %d s; reproduce with `make bench` (installs python3-numpy and python3-scipy "
  .. "if missing)")
  :format(os.time() - started))
local md = B.markdown(date, machine)
print()
io.write(md)
if #arg == 0 then
  local f = assert(io.open("spec/bench/RESULTS.md", "w"))
  f:write(md)
  f:close()
  print("written to spec/bench/RESULTS.md")
end
if #failed > 0 then
  io.stderr:write("bench: failed sections: " .. table.concat(failed, ", ") .. "\n")
  os.exit(1)
end
