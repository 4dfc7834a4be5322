-- Batch evaluation (m:eval on a table or an array) must give, bit for bit,
-- what scalar evaluation m(x) gives for every point: in random and sorted
-- order, on uniform and uneven knots, on knots themselves, outside the knots
-- under every extension rule, and on discontinuous models (right-hand rule).
-- The batch path takes different routes by input (a merge for sorted input,
-- a direct guess for uniform knots, a bucket table otherwise, a counting
-- search for few segments, a binary search inside buckets holding many
-- knots: very uneven knots or large models); the cases below
-- reach each of them.
local sw = require "segwise"

-- Same double, including the sign of zero.
local function same(a, b)
  return string.pack("<d", a) == string.pack("<d", b)
end

-- First index where batch and scalar disagree, or nil.
local function first_mismatch(m, xs, ys)
  for i = 1, #xs do
    local ok, want = pcall(m, xs[i])
    if not ok or not same(want, ys[i]) then return i, want, ys[i] end
  end
  return nil
end

-- Knots: "uniform" spacing, "uneven" random spacing, or "wild" (a tight
-- cluster and wide gaps, so the bucket table holds many knots per bucket).
local function make_knots(nseg, kind)
  local x = {}
  if kind == "uniform" then
    local lo, h = -3 + math.random(), 0.25 + math.random()
    for k = 0, nseg do x[k + 1] = lo + k * h end
  elseif kind == "uneven" then
    x[1] = math.random() * 10 - 5
    for k = 1, nseg do x[k + 1] = x[k] + 0.05 + math.random() * 2 end
  else
    x[1] = 0
    for k = 1, nseg do
      x[k + 1] = k <= nseg // 2 and x[k] + 1e-7 * (1 + math.random()) or x[k] + 1 + math.random()
    end
  end
  return x
end

local function continuous_model(x, extend)
  local y = {}
  for k = 1, #x do y[k] = math.random() * 4 - 2 end
  return sw.pwl { x = x, y = y, extend = extend }, y
end

-- Segments that jump at every interior knot.
local function jumping_model(x, extend)
  local segs = {}
  for k = 1, #x - 1 do
    segs[k] = { lo = x[k], hi = x[k + 1], slope = math.random() * 6 - 3,
                intercept = math.random() * 4 - 2 }
  end
  return sw.pwl.segments(segs, { extend = extend })
end

-- Points: every knot, the knot ends, points inside, and (when outside is
-- true) points beyond both ends, and the infinities when infinite is true
-- (tables only: arrays hold finite numbers); shuffled unless sorted.
local function make_points(x, count, outside, sorted, infinite)
  local lo, hi, pts = x[1], x[#x], {}
  for k = 1, #x do pts[#pts + 1] = x[k] end
  for _ = 1, count do pts[#pts + 1] = lo + (hi - lo) * math.random() end
  if outside then
    local w = hi - lo
    for _ = 1, 20 do
      pts[#pts + 1] = lo - w * math.random()
      pts[#pts + 1] = hi + w * math.random()
    end
    if infinite then pts[#pts + 1], pts[#pts + 2] = -math.huge, math.huge end
  end
  if sorted then
    table.sort(pts)
  else
    for i = #pts, 2, -1 do
      local j = math.random(i)
      pts[i], pts[j] = pts[j], pts[i]
    end
  end
  return pts
end

describe("segwise.pwl", function()
  describe("m:eval on many points", function()
    before_each(function() math.randomseed(20261202) end)

    local kinds = { "uniform", "uneven", "wild" }
    local sizes = { 1, 3, 4, 5, 8, 17, 64, 300, 3000 }

    it("agrees bit for bit with scalar evaluation (continuous, every rule, random and "
      .. "sorted)", function()
      local cases = 0
      for _, kind in ipairs(kinds) do
        for _, nseg in ipairs(sizes) do
          for _, extend in ipairs { "line", "hold", "error" } do
            for _, sorted in ipairs { false, true } do
              local x = make_knots(nseg, kind)
              local m = continuous_model(x, extend)
              local pts = make_points(x, 400, extend ~= "error", sorted, true)
              local ys = m:eval(pts)
              local i, want, got = first_mismatch(m, pts, ys)
              assert.is_nil(i, ("%s knots, %d segments, extend %s, sorted %s: point %s "
                .. "(x = %.17g) gave %.17g, scalar %.17g"):format(kind, nseg, extend,
                tostring(sorted), tostring(i), i and pts[i] or 0, got or 0, want or 0))
              cases = cases + 1
            end
          end
        end
      end
      assert.are.equal(#kinds * #sizes * 3 * 2, cases)
    end)

    it("agrees bit for bit on discontinuous models, right-hand value at interior knots", function()
      for _, kind in ipairs(kinds) do
        for _, nseg in ipairs(sizes) do
          for _, sorted in ipairs { false, true } do
            local x = make_knots(nseg, kind)
            local m = jumping_model(x, "hold")
            local pts = make_points(x, 300, true, sorted, true)
            local ys = m:eval(pts)
            assert.is_nil(first_mismatch(m, pts, ys), kind .. " " .. nseg)
            -- The rule itself, checked from the segments' own lines: at an
            -- interior knot the value is the segment starting there.
            for k = 2, #x - 1 do
              local seg = m:seg(k)
              local want = seg.slope * x[k] + seg.intercept
              local same_x = {}
              for j = 1, 20 do same_x[j] = x[k] end -- enough points for the batch routes
              local got = m:eval(same_x)
              assert.is.near(want, got[1], 1e-9 * (1 + math.abs(want))) -- rounding of the line form
              assert.are.equal(got[1], got[20])
            end
          end
        end
      end
    end)

    it("agrees bit for bit on a large model (more segments than bucket slots)", function()
      for _, sorted in ipairs { false, true } do
        local x = make_knots(12000, "uneven")
        local m = continuous_model(x, "line")
        local pts = make_points(x, 5000, true, sorted)
        assert.is_nil(first_mismatch(m, pts, m:eval(pts)))
        -- few points, far apart: the sorted walk gallops over runs of knots,
        -- random order takes the scalar path
        local sparse = make_points({ x[1], x[#x] }, 60, true, sorted)
        assert.is_nil(first_mismatch(m, sparse, m:eval(sparse)))
      end
    end)

    it("agrees on a result above 32 MiB (the huge-page advice path)", function()
      local x = make_knots(64, "uneven")
      local m = continuous_model(x, "hold")
      local n, lo, w = 4400000, x[1] - 1, x[#x] - x[1] + 2
      local a = sw.array(n)
      for i = 1, n do a[i] = lo + w * math.random() end
      local y = m:eval(a)
      assert.are.equal(n, #y)
      for _ = 1, 3000 do
        local i = math.random(n)
        assert.is_true(same(m(a[i]), y[i]), "index " .. i)
      end
      assert.is_true(same(m(a[n]), y[n]))
      y:free()
      a:free()
    end)

    it("takes arrays and returns the same bits as from a table", function()
      for _, kind in ipairs(kinds) do
        local x = make_knots(64, kind)
        local m = continuous_model(x, "line")
        for _, sorted in ipairs { false, true } do
          local pts = make_points(x, 2000, true, sorted)
          local ya = m:eval(sw.array(pts))
          assert.are.equal(#pts, #ya)
          local yt = m:eval(pts)
          for i = 1, #pts do
            if not same(ya[i], yt[i]) then
              error(("%s sorted=%s: array and table differ at %d"):format(kind,
                tostring(sorted), i))
            end
          end
          assert.is_nil(first_mismatch(m, pts, yt))
        end
      end
    end)

    it("writes into a given array, also in place over the input, with the same bits", function()
      for _, kind in ipairs(kinds) do
        local x = make_knots(64, kind)
        local m = continuous_model(x, "line")
        for _, sorted in ipairs { false, true } do
          local pts = make_points(x, 1000, true, sorted)
          local want = m:eval(pts)
          local out = sw.array(#pts + 3)
          assert.are.equal(out, m:eval(sw.array(pts), out))
          local a = sw.array(pts)
          assert.are.equal(a, m:eval(a, a)) -- in place: each x[i] is read before y[i] is written
          for i = 1, #pts do
            if not (same(want[i], out[i]) and same(want[i], a[i])) then
              error(("%s sorted=%s: into an array or in place differs at %d"):format(kind,
                tostring(sorted), i))
            end
          end
          assert.are.equal(0, out[#pts + 1]) -- beyond the input: untouched
        end
      end
    end)

    it("switches from the sorted walk to random access at the first step back", function()
      local x = make_knots(40, "uneven")
      local m = continuous_model(x, "line")
      local pts = make_points(x, 500, true, true)
      local back = make_points(x, 500, true, false)
      for i = 1, #back do pts[#pts + 1] = back[i] end
      assert.is_nil(first_mismatch(m, pts, m:eval(pts)))
    end)

    it("gives the knot values exactly at the knots (linear interpolation, common "
      .. "practice)", function()
      for _, kind in ipairs(kinds) do
        local x = make_knots(64, kind)
        local m, y = continuous_model(x, "error")
        local ys = m:eval(x)
        for k = 1, #x do assert.are.equal(y[k], ys[k]) end
        -- Between knots: the chord through the neighbouring knots, written
        -- out here independently of the library.
        local pts = make_points(x, 500, false, false)
        local yp = m:eval(pts)
        for i, p in ipairs(pts) do
          local k = 1
          while k < #x - 1 and p >= x[k + 1] do k = k + 1 end
          local want = y[k] + (y[k + 1] - y[k]) * (p - x[k]) / (x[k + 1] - x[k])
          assert.is.near(want, yp[i], 1e-12 * (1 + math.abs(want))) -- rounding only
        end
      end
    end)

    it("names the index of the first point outside the knots under extend = \"error\"", function()
      for _, n in ipairs { 5, 40, 3000 } do -- below and above the batch set-up size
        local x = make_knots(64, "uneven")
        local m = continuous_model(x, "error")
        for _, sorted in ipairs { false, true } do
          local pts = make_points(x, n, false, sorted)
          local bad = math.random(#pts)
          pts[bad] = x[#x] + 1
          local ok, msg = pcall(m.eval, m, pts)
          assert.is_false(ok)
          assert.matches("at index " .. bad .. ":", msg, 1, true)
          assert.matches("outside", msg)
        end
      end
    end)

    it("names the index of a NaN point", function()
      local x = make_knots(10, "uniform")
      local m = continuous_model(x, "line")
      for _, at in ipairs { 1, 17, 100 } do
        local pts = make_points(x, 100, false, true)
        pts[at] = 0 / 0
        local ok, msg = pcall(m.eval, m, pts)
        assert.is_false(ok)
        assert.matches("at index " .. at .. ": x is NaN", msg, 1, true)
      end
    end)

    it("returns an empty result for no points", function()
      local m = continuous_model(make_knots(4, "uniform"), "line")
      assert.are.equal(0, #m:eval({}))
      assert.are.equal(0, #m:eval(sw.array(0)))
    end)
  end)
end)
