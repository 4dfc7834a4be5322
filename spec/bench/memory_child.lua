-- Child process of the memory comparison: fills an array of N points, then
-- evaluates the benchmark's model on it, and prints the peak resident set
-- (VmHWM) at three moments: after loading segwise, after filling the input,
-- after the evaluation.  MODE "fresh": m:eval(x) returns a new array;
-- "inplace": m:eval(x, x) overwrites the input.
-- Usage: lua5.4 spec/bench/memory_child.lua N MODE
package.path = "./spec/bench/?.lua;" .. package.path
local sw = require "segwise"
local B = require "benchlib"

local function hwm()
  local f = assert(io.open("/proc/self/status"))
  local s = f:read("a")
  f:close()
  return tonumber(s:match("VmHWM:%s*(%d+)")) * 1024
end

local n = math.tointeger(tonumber(arg[1]))
local xs, ys = {}, {}
for k = 0, 64 do
  xs[k + 1] = 0.75 * (k / 64) ^ 0.6
  ys[k + 1] = 1e-14 * (math.exp(xs[k + 1] / 0.02585) - 1)
end
local m = sw.pwl { x = xs, y = ys }
collectgarbage()
local base = hwm()
local x = B.points(n, 99, "random", 0, 0.75)
collectgarbage()
local filled = hwm()
local y = arg[2] == "inplace" and m:eval(x, x) or m:eval(x)
local peak = hwm()
assert(#y == n)
print(("base %d filled %d peak %d"):format(base, filled, peak))
