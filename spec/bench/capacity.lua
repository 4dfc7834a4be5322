-- How many devices each exhaustive or pivoting method handles in a second:
-- ladders of N two- or three-segment devices (E through R to node 1, node
-- j to node j+1 through R, a device from every node to ground), one
-- net:solve per N with method = "enumerate" or "lcp".  N grows until a
-- solve takes over a second; the row gives the largest N under it.
local sw = require "segwise"

local LIMIT = 1.0

local function ladder(size, m)
  local net = sw.network()
  net:vsource("VBUS", "n0", "0", 5)
  for j = 1, size do
    net:resistor("RSEG" .. j, "n" .. (j - 1), "n" .. j, 1000)
    net:element("DIODE" .. j, "n" .. j, "0", m, { x = "v" })
  end
  return net
end

local function timed(net, method)
  local t = os.clock()
  local opts = { method = method }
  if method == "enumerate" then opts.max_states = 1e9 end
  net:solve(opts)
  return os.clock() - t
end

-- largest size whose solve stays under LIMIT: grow by `grow` from `start`
local function reach(m, method, start, step)
  local best, best_t, size = 0, 0, start
  while true do
    local t = timed(ladder(size, m), method)
    if t > LIMIT then return best, best_t end
    best, best_t = size, t
    size = size + step(size)
  end
end

return function(B)
  local two = sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.02 } }
  local three = sw.pwl { x = { -1, 0.55, 0.65, 0.8 }, y = { 0, 0, 0.002, 0.02 } }
  for _, case in ipairs {
    { "enumerate", two, "two-segment", 4, function() return 1 end },
    { "enumerate", three, "three-segment", 4, function() return 1 end },
    { "lcp", two, "two-segment", 20, function(n) return math.max(10, n // 5) end },
    { "lcp", three, "three-segment", 20, function(n) return math.max(10, n // 5) end },
  } do
    local n, t = reach(case[2], case[1], case[4], case[5])
    B.row("capacity", ("ladder of %s devices, one solve"):format(case[3]), n,
      ("segwise net:solve{method = \"%s\"}"):format(case[1]), t,
      ("largest ladder solved within %.0f s"):format(LIMIT))
    B.note(("capacity: method = \"%s\" solves a ladder of %d %s devices in %.2f s"):format(
      case[1], n, case[3], t))
  end
end
