-- Property tests with fixed seeds: many generated cases, each checked
-- against a law that holds whatever the data (the inverse of the inverse
-- is the model; the canonical form reproduces the model; operating points
-- obey Kirchhoff's laws; a fit never claims less error than a dense
-- recheck).  The seeds are fixed so that a failure always reproduces.
local sw = require "segwise"

-- Lua 5.4's xoshiro256** generator, seeded per test.
local function rng(seed)
  math.randomseed(seed)
  return function(a, b) return a + (b - a) * math.random() end
end

-- A continuous model on n + 1 knots with positive steps; rising when
-- dir = 1, falling when dir = -1, anything when dir = 0.
local function random_model(r, n, dir)
  local xs, ys = { r(-5, 5) }, { r(-5, 5) }
  for k = 2, n + 1 do
    xs[k] = xs[k - 1] + r(0.01, 2)
    local step = r(0.001, 3)
    if dir == 0 then step = r(-3, 3) end
    ys[k] = ys[k - 1] + (dir == -1 and -step or step)
  end
  return sw.pwl { x = xs, y = ys }, xs, ys
end

describe("segwise properties", function()
  describe("inverse", function()
    it("the inverse of the inverse is the model (200 monotone models, seed 7)", function()
      local r = rng(7)
      for case = 1, 200 do
        local m, xs, ys = random_model(r, math.random(1, 12), case % 2 == 0 and 1 or -1)
        local back = m:inverse():inverse()
        local bx, by = back:knots()
        assert.are.equal(#xs, #bx)
        for k = 1, #xs do
          -- swapping the knots twice gives the same numbers back, bit for bit
          assert.are.equal(xs[k], bx[k])
          assert.are.equal(ys[k], by[k])
        end
        for _ = 1, 5 do
          local x = r(xs[1], xs[#xs])
          -- m^-1(m(x)) = x up to rounding (relative 1e-12 of the knot span)
          assert.is.near(x, m:inverse()(m(x)), 1e-12 * (xs[#xs] - xs[1] + math.abs(x)))
        end
      end
    end)

    it("a model that is not strictly monotone never inverts (100 models, seed 11)", function()
      local r = rng(11)
      for _ = 1, 100 do
        local xs, ys = { 0 }, { 0 }
        local n = math.random(2, 8)
        for k = 2, n + 1 do xs[k] = xs[k - 1] + r(0.1, 1); ys[k] = ys[k - 1] + r(0.1, 1) end
        local j = math.random(2, n + 1)
        ys[j] = ys[j - 1] -- one flat segment
        local ok, msg = pcall(sw.pwl { x = xs, y = ys }.inverse, sw.pwl { x = xs, y = ys })
        assert.is_false(ok)
        assert.matches("segwise%.", msg)
      end
    end)
  end)

  describe("evaluation", function()
    it("batch evaluation equals point-by-point evaluation (100 models, seed 17)", function()
      local r = rng(17)
      for case = 1, 100 do
        local n = math.random(1, 40)
        local m, xs = random_model(r, n, 0)
        local extend = ({ "line", "hold" })[case % 2 + 1]
        local _, ys = m:knots()
        m = sw.pwl { x = xs, y = ys, extend = extend }
        local pts = {}
        for k = 1, 300 do
          -- inside, outside and exactly on the knots
          pts[k] = (k % 7 == 0) and xs[math.random(1, #xs)] or r(xs[1] - 2, xs[#xs] + 2)
        end
        local batch = m:eval(pts)
        local arr = m:eval(sw.array(pts))
        for k = 1, #pts do
          local one = m(pts[k])
          assert.are.equal(one, batch[k])
          assert.are.equal(one, arr[k])
        end
      end
    end)
  end)

  describe("files", function()
    local function tmp() return os.tmpname() end

    it("a saved model loads back bit for bit (60 models, seed 19)", function()
      local r = rng(19)
      for case = 1, 60 do
        local m, xs, ys = random_model(r, math.random(1, 15), 0)
        if case % 3 == 0 then -- awkward magnitudes: tiny and huge steps
          for k = 1, #xs do xs[k] = xs[k] * 1e-9; ys[k] = ys[k] * 1e12 end
          m = sw.pwl { x = xs, y = ys }
        end
        local path = tmp()
        m:save(path)
        local back = sw.pwl.load(path)
        os.remove(path)
        local bx, by = back:knots()
        assert.are.equal(#xs, #bx)
        for k = 1, #xs do
          assert.are.equal(xs[k], bx[k])
          assert.are.equal(ys[k], by[k])
        end
      end
    end)

    if sw.curve.read then
      it("numbers written with %.17g read back exactly (seed 23)", function()
        local r = rng(23)
        local path = tmp()
        local f = assert(io.open(path, "w"))
        f:write("x,y\n")
        local xs, ys, x = {}, {}, 0
        for k = 1, 500 do
          x = x + r(1e-6, 1)
          xs[k] = x
          -- mantissas and exponents all over the double range
          ys[k] = r(-1, 1) * 10 ^ math.random(-300, 300)
          f:write(("%.17g,%.17g\n"):format(xs[k], ys[k]))
        end
        f:close()
        local c = sw.curve.read(path, { x = "x", y = "y" })
        local ax = sw.array.read(path, "y")
        os.remove(path)
        local px, py = c:points()
        for k = 1, #xs do
          assert.are.equal(xs[k], px[k])
          assert.are.equal(ys[k], py[k])
          assert.are.equal(ys[k], ax[k])
        end
      end)
    end
  end)

  describe("canonical form", function()
    it("a + b*x + sum c_i*|x - beta_i| reproduces the model (200 models, seed 3)", function()
      local r = rng(3)
      for _ = 1, 200 do
        local n = math.random(1, 10)
        local m, xs = random_model(r, n, 0)
        local a, b, c, beta = m:canonical()
        assert.are.equal(n - 1, #c)
        -- Chua and Kang's canonical form (1977): the kinks sit at the
        -- interior knots with c_i = (slope_{i+1} - slope_i) / 2 and
        -- b = (first slope + last slope) / 2.  Recomputed here from the
        -- segments, independently of the library's own routine.
        local s1, sn = m:seg(1).slope, m:seg(n).slope
        assert.is.near((s1 + sn) / 2, b, 1e-12 * (1 + math.abs(b)))
        for i = 1, n - 1 do
          assert.are.equal(xs[i + 1], beta[i])
          local want = (m:seg(i + 1).slope - m:seg(i).slope) / 2
          assert.is.near(want, c[i], 1e-12 * (1 + math.abs(want)))
        end
        -- and the formula evaluates to the model everywhere, also beyond the
        -- end knots where the model continues its end segments
        for _ = 1, 20 do
          local x = r(xs[1] - 3, xs[#xs] + 3)
          local y = a + b * x
          for i = 1, n - 1 do y = y + c[i] * math.abs(x - beta[i]) end
          local scale = 1 + math.abs(m(x)) + math.abs(a) + math.abs(b * x)
          assert.is.near(m(x), y, 1e-11 * scale)
        end
        -- round trip: the knots rebuilt from the canonical values give the model
        local ys2 = {}
        for k = 1, #xs do
          local y = a + b * xs[k]
          for i = 1, n - 1 do y = y + c[i] * math.abs(xs[k] - beta[i]) end
          ys2[k] = y
        end
        local m2 = sw.pwl { x = xs, y = ys2 }
        for k = 1, #xs do assert.is.near(m(xs[k]), m2(xs[k]), 1e-11 * (1 + math.abs(m(xs[k])))) end
      end
    end)
  end)

  if sw.network then
    describe("operating points", function()
      -- Random connected circuits: a resistor tree reaching every node from
      -- the reference (so no node floats and no current source is cut off),
      -- extra resistors, one voltage source to ground, current sources and
      -- rising PWL devices (passive, so an operating point exists).
      local function random_circuit(r)
        local net, els = sw.network(), {}
        local nodes = { "0" }
        local nn = math.random(2, 5)
        for k = 1, nn do nodes[#nodes + 1] = "n" .. k end
        local function add(kind, name, a, b, value, extra)
          els[#els + 1] = { kind = kind, name = name, a = a, b = b, value = value, model = extra }
        end
        for k = 2, #nodes do
          -- a tree branch and a leak to ground: no node dangles on one element
          add("resistor", "RT" .. k, nodes[k], nodes[math.random(1, k - 1)], r(10, 1e4))
          add("resistor", "RG" .. k, nodes[k], "0", r(1e3, 1e5))
        end
        for k = 1, math.random(0, 3) do
          local a, b = nodes[math.random(1, #nodes)], nodes[math.random(1, #nodes)]
          if a ~= b then add("resistor", "RX" .. k, a, b, r(10, 1e4)) end
        end
        add("vsource", "VIN", nodes[math.random(2, #nodes)], "0", r(-10, 10))
        for k = 1, math.random(0, 2) do
          local a, b = nodes[math.random(1, #nodes)], nodes[math.random(1, #nodes)]
          if a ~= b then add("isource", "ISRC" .. k, a, b, r(-0.01, 0.01)) end
        end
        for k = 1, math.random(1, 3) do
          local a, b = nodes[math.random(1, #nodes)], nodes[math.random(1, #nodes)]
          if a ~= b then
            local xs, ys = { -1 }, { r(-1e-3, 0) }
            for j = 2, math.random(2, 5) do
              xs[j] = xs[j - 1] + r(0.05, 1)
              ys[j] = ys[j - 1] + r(1e-5, 0.02)
            end
            add("element", "DIODE" .. k, a, b, nil, sw.pwl { x = xs, y = ys })
          end
        end
        for _, e in ipairs(els) do
          if e.kind == "element" then net:element(e.name, e.a, e.b, e.model)
          else net[e.kind](net, e.name, e.a, e.b, e.value) end
        end
        return net, els, nodes
      end

      -- Checks KCL at every node, KVL for every branch and each element's law.
      local function check_op(op, els, nodes)
        local sum, scale = {}, {}
        for _, n in ipairs(nodes) do sum[n], scale[n] = 0, 1e-6 end
        for _, e in ipairs(els) do
          local i = op.i[e.name]
          assert.is_number(i)
          sum[e.a] = sum[e.a] + i; scale[e.a] = scale[e.a] + math.abs(i)
          sum[e.b] = sum[e.b] - i; scale[e.b] = scale[e.b] + math.abs(i)
          -- KVL: the branch voltage is the difference of its node voltages
          local vd = op.v[e.a] - op.v[e.b]
          assert.is.near(vd, op.vd[e.name], 1e-9 * (1 + math.abs(vd)))
          if e.kind == "resistor" then
            assert.is.near(vd / e.value, i, 1e-9 * (1e-6 + math.abs(i))) -- Ohm's law
          elseif e.kind == "vsource" then
            assert.is.near(e.value, vd, 1e-9 * (1 + math.abs(e.value)))
          elseif e.kind == "isource" then
            assert.is.near(e.value, i, 1e-12 + 1e-9 * math.abs(e.value))
          else
            -- the device sits on its model: i = model(v) (x = "v")
            assert.is.near(e.model(vd), i, 1e-9 * (1e-6 + math.abs(i)))
          end
        end
        -- KCL: the currents leaving each node sum to zero (reference included)
        for _, n in ipairs(nodes) do assert.is.near(0, sum[n], 1e-9 * scale[n]) end
        assert.are.equal(0, op.v["0"])
      end

      it("every operating point satisfies Kirchhoff's laws (150 circuits, seed 5)", function()
        local r = rng(5)
        local solved = 0
        for _ = 1, 150 do
          local net, els, nodes = random_circuit(r)
          for _, method in ipairs { "auto", "enumerate", "lcp" } do
            local ok, op = pcall(net.solve, net, { method = method })
            if ok then
              check_op(op, els, nodes)
              solved = solved + 1
            else
              -- a refusal is a clear error, never a crash
              assert.matches("segwise%.", op)
            end
          end
          local ok, list = pcall(net.solve_all, net)
          assert.is_true(ok, tostring(list))
          for _, op in ipairs(list) do check_op(op, els, nodes) end
        end
        -- rising devices with a resistor tree always have a solution: most
        -- of the attempts must succeed for the check to mean anything
        assert.is_true(solved > 300, "only " .. solved .. " of 450 solves succeeded")
      end)

      it("a sweep gives the points that separate solves give (seed 29)", function()
        local r = rng(29)
        for _ = 1, 30 do
          local net = random_circuit(r)
          local values = {}
          for k = 1, 5 do values[k] = r(-10, 10) end
          local rows = net:sweep("VIN", values)
          for k, v in ipairs(values) do
            net:set("VIN", v)
            local op = net:solve()
            -- rising devices and positive resistors: one operating point, so
            -- the warm-started sweep must land on it too
            for name, i in pairs(op.i) do
              assert.is.near(i, rows[k].i[name], 1e-9 * (1e-6 + math.abs(i)))
            end
          end
        end
      end)

      it("a sweep gives a Kirchhoff-consistent point for every value (seed 9)", function()
        local r = rng(9)
        for _ = 1, 30 do
          local net, els, nodes = random_circuit(r)
          local values = {}
          for k = 1, 6 do values[k] = r(-10, 10) end
          local rows = net:sweep("VIN", values)
          assert.are.equal(#values, #rows)
          for k, op in ipairs(rows) do
            for _, e in ipairs(els) do if e.name == "VIN" then e.value = values[k] end end
            check_op(op, els, nodes)
          end
        end
      end)
    end)
  end

  if sw.fit then
    describe("fits", function()
      it("never report an error below a dense recheck (seed 13)", function()
        local r = rng(13)
        local criteria = { "minimax", "lsq", "interp", "chord" }
        local schemes = { "uniform", "curvature", "optimal" }
        local checked = 0
        for case = 1, 60 do
          local curve, lo, hi
          local kind = case % 3
          if kind == 0 then
            curve = sw.curve.diode { is = 10 ^ r(-15, -9), n = r(1, 2), rs = r(0, 2) }
            lo, hi = r(0, 0.3), r(0.5, 0.8)
          elseif kind == 1 then
            curve = sw.curve.power { k = r(0.1, 10), n = r(1.2, 4) }
            lo, hi = r(-3, 0), r(0.5, 3)
          else
            local xs, ys = { 0 }, { 0 }
            for k = 2, 40 do xs[k] = xs[k - 1] + r(0.01, 1); ys[k] = ys[k - 1] + r(-1, 2) end
            curve = sw.curve.samples(xs, ys)
            lo, hi = xs[1], xs[#xs]
          end
          local opts = { lo = lo, hi = hi, criterion = criteria[math.random(#criteria)],
                         knots = schemes[math.random(#schemes)] }
          if math.random() < 0.3 then
            opts.tol = r(0.01, 0.5)
          else
            opts.segments = math.random(1, 6)
          end
          local ok, m = pcall(sw.fit, curve, opts)
          if ok then
            local claimed = m:fit_info().max_abs
            local dense = m:compare(curve, { lo = lo, hi = hi, n = 100001 }).max_abs
            -- the reported error is a maximum over the whole range, so a denser
            -- recheck may only match it (relative 1e-9 for rounding)
            assert.is_true(claimed >= dense * (1 - 1e-9) - 1e-300,
              ("case %d (%s): fit_info max_abs %.17g < dense recheck %.17g"):format(
                case, tostring(opts.criterion), claimed, dense))
            checked = checked + 1
          else
            assert.matches("segwise%.", m)
          end
        end
        assert.is_true(checked >= 45, "only " .. checked .. " of 60 fits succeeded")
      end)

      -- Long sample sets take shortcuts (a level search on a subset first;
      -- csrc/core/fit/fit_minimax.c): they must not change the answer.  Optimality of
      -- the n-segment minimax level E (the fewest-segments argument): within
      -- 0.1 % below E the fewest-segment fit needs more than n segments,
      -- within 0.1 % above it needs at most n.  20001 samples of a curve
      -- with an inflection, so the continuous search is the reachable-set one.
      it("optimal minimax levels on 20001 samples are tight from both sides", function()
        local n = 20001
        local xs, ys = sw.array(n), sw.array(n)
        for i = 1, n do
          local x = 3 * (i - 1) / (n - 1)
          xs[i], ys[i] = x, math.sin(4 * x) + 0.3 * x
        end
        local c = sw.curve.samples(xs, ys)
        for _, case in ipairs { { true, 11 }, { false, 6 }, { false, 11 } } do
          local cont, segs = case[1], case[2]
          local E = sw.fit(c, { segments = segs, continuous = cont }):fit_info().max_abs
          local below = sw.fit(c, { tol = E * (1 - 1e-3), continuous = cont }):nseg()
          local above = sw.fit(c, { tol = E * (1 + 1e-3), continuous = cont }):nseg()
          assert.are.equal(segs + 1, below,
            ("continuous %s, %d segments"):format(tostring(cont), segs))
          assert.are.equal(segs, above, ("continuous %s, %d segments"):format(tostring(cont), segs))
        end
      end)
    end)
  end
end)
