-- Evaluation of a 64-segment model on 1e6 and 1e7 points, random order and
-- sorted: segwise (m:eval on an array) against numpy.interp and GSL's
-- gsl_interp (linear, with an accelerator), and a plain Lua loop as the
-- floor.  The model is a diode-like exponential on uneven knots, denser
-- where it bends, as a fit would place them (so the uniform-knot shortcut
-- does not apply); one more case on uniform knots shows that shortcut.
local sw = require "segwise"

local LO, HI, NSEG = 0.0, 0.75, 64

local function model_knots(uniform)
  local xs, ys = {}, {}
  for k = 0, NSEG do
    local x = HI * (k / NSEG) ^ (uniform and 1 or 0.6) -- uneven: closer together towards HI
    xs[k + 1] = x
    ys[k + 1] = 1e-14 * (math.exp(x / 0.02585) - 1)
  end
  return xs, ys
end

-- The floor: binary search over the knots in plain Lua tables.
local function lua_eval(xs, ys, pts, out)
  local n, nk = #pts, #xs
  for i = 1, n do
    local x, lo, hi = pts[i], 1, nk
    while hi - lo > 1 do
      local mid = (lo + hi) // 2
      if x >= xs[mid] then lo = mid else hi = mid end
    end
    out[i] = ys[lo] + (ys[lo + 1] - ys[lo]) / (xs[lo + 1] - xs[lo]) * (x - xs[lo])
  end
end

local function agree(a, b)
  return math.abs(a - b) <= 1e-9 * math.max(math.abs(a), math.abs(b))
end

local CASES = {
  { n = 1000000, order = "random" }, { n = 1000000, order = "sorted" },
  { n = 10000000, order = "random" }, { n = 10000000, order = "sorted" },
  { n = 10000000, order = "random", uniform = true },
}

local function size_tag(n) return n == 1000000 and "1e6" or "1e7" end

local function run_case(B, cs)
  local n, order = cs.n, cs.order
  local xs, ys = model_knots(cs.uniform)
  local m = sw.pwl { x = xs, y = ys }
  local knots = B.path("knots.bin")
  local kv = {}
  for i = 1, #xs do kv[i] = xs[i] end
  for i = 1, #ys do kv[#xs + i] = ys[i] end
  B.write_doubles(knots, kv)
  local case = ("%d segments%s, %s"):format(NSEG, cs.uniform and " (uniform knots)" or "", order)
  local seed = 12345 + n + (order == "sorted" and 1 or 0)
  local pts = B.points(n, seed, order, LO, HI)
  local file = B.path("points.bin")
  local ok, msg = B.sh(("%s gen %d %d %s %.17g %.17g %s"):format(B.gsl, n, seed, order, LO, HI,
    file))
  local check = tonumber(msg:match("check (%S+)"))
  assert(ok and check == B.fingerprint(pts), "peer data differ from the Lua data: " .. msg)
  local want -- the segwise result's fingerprint, which every peer must match
  local into -- a result array made once, for m:eval(x, into)
  local sides = {
    { label = "segwise", run = function()
      local t = os.clock()
      local y = m:eval(pts)
      t = os.clock() - t
      want = want or B.fingerprint(y)
      y:free()
      return t
    end },
    { label = "segwise_out", run = function() -- into an existing array: no new pages
      into = into or sw.array(n)
      local t = os.clock()
      m:eval(pts, into)
      return os.clock() - t
    end },
    { label = "gsl", run = function()
      local t, c = B.peer(("%s interp %s %s"):format(B.gsl, knots, file))
      assert(agree(c, want), ("gsl_interp result differs: %.17g vs %.17g"):format(c, want))
      return t
    end },
  }
  if B.python then
    sides[#sides + 1] = { label = "numpy", run = function()
      local t, c = B.peer(("%s spec/bench/peer_numpy.py interp %s %s"):format(B.python, knots,
        file))
      assert(agree(c, want), ("numpy.interp result differs: %.17g vs %.17g"):format(c, want))
      return t
    end }
  end
  local tab, tout
  if n <= 1000000 then -- the Lua floor at 1e6 only: at 1e7 its tables alone take 320 MB
    tab, tout = pts:totable(), {}
    sides[#sides + 1] = { label = "lua", run = function()
      local t = os.clock()
      lua_eval(xs, ys, tab, tout)
      t = os.clock() - t
      assert(agree(B.fingerprint(tout), want), "plain Lua result differs")
      return t
    end }
  end
  local med = B.rounds_of(sides)
  assert(agree(B.fingerprint(into), want), "m:eval(x, out) differs from m:eval(x)")
  local tag = ("eval_%s_%s%s"):format(size_tag(n), order, cs.uniform and "_uniform" or "")
  B.row("evaluation", case, n, "segwise m:eval(array)", med.segwise,
    ("%.0f M points/s"):format(n / med.segwise / 1e6))
  B.row("evaluation", case, n, "segwise m:eval(array, out)", med.segwise_out,
    ("%.0f M points/s, into an existing array"):format(n / med.segwise_out / 1e6))
  B.row("evaluation", case, n, "GSL gsl_interp linear + accel", med.gsl)
  B.ratio(tag .. "_vs_gsl", med.gsl, med.segwise)
  if med.numpy then
    B.row("evaluation", case, n, "numpy.interp", med.numpy)
    local x = B.ratio(tag .. "_vs_numpy", med.numpy, med.segwise)
    if not cs.uniform then
      local goal = order == "random" and 2 or 1
      B.note(("evaluation %s points, %s: %.2fx numpy.interp (target >= %dx): %s")
        :format(size_tag(n), order, x, goal, x >= goal and "met" or "missed"))
    end
  end
  if med.lua then
    B.row("evaluation", case, n, "plain Lua loop", med.lua)
    B.ratio(tag .. "_vs_lua", med.lua, med.segwise)
  end
  pts:free()
  into:free()
end

return function(B)
  for _, cs in ipairs(CASES) do
    run_case(B, cs)
    collectgarbage()
  end
end
