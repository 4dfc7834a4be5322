-- Hostile callbacks: every entry point that runs Lua code while the C side
-- holds objects (a curve function in a fit, a compare, an evaluation and an
-- exact solve; the values and out lists of a sweep or a study read through
-- their metamethods) with code that errors, yields, collects garbage, calls
-- __gc, frees, changes or re-enters what is being computed.  After each, the
-- objects either work (the same answer as an undisturbed run) or refuse
-- cleanly; nothing reads freed memory (this file runs under ASan and
-- valgrind: make asan SPEC=spec/hostile_spec.lua).
local sw = require "segwise"
local files = require "helpers.files"
local raises = files.raises

-- Shockley law i(v) with is = 1e-14 A, vt = 25.852 mV: a small silicon
-- diode at 300 K (common practice for the values).
local IS, VT = 1e-14, 0.025852
local function shockley(v) return IS * (math.exp(v / VT) - 1) end

-- A fn curve on [0, 0.8] that runs ctx.hook(ctx) at its first call only.
local function hooked(ctx)
  local fired = false
  return sw.curve.fn(function(v)
    if not fired then
      fired = true
      ctx.hook(ctx)
    end
    return shockley(v)
  end, { lo = 0, hi = 0.8 })
end

local plain = sw.curve.fn(shockley, { lo = 0, hi = 0.8 })
local model_of_plain = sw.fit(plain, { segments = 6 })

-- One diode behind 1 kohm from 5 V, the diode's exact curve the hooked one.
local function exact_net(ctx)
  local net = sw.network()
  net:vsource("VS", "top", "0", 5)
  net:resistor("RB", "top", "a", 1000)
  net:element("DIODE", "a", "0", model_of_plain, { exact = ctx.curve })
  return net
end

local REFUSED_CHANGE = "network is being solved: it cannot change inside its own callback"
local REFUSED_SOLVE = "network is being solved: it cannot be solved again"

-- Each entry: make(ctx) fills ctx; run(ctx) -> a number; busy(ctx): the
-- objects the computation holds while the callback runs; changes(ctx):
-- {label, f} that must be refused inside the callback with the message
-- given; reenter(ctx): a nested call of the same kind, and what it gives.
local entries = {
  {
    name = "sw.fit",
    make = function(ctx) ctx.curve = hooked(ctx) end,
    run = function(ctx) return sw.fit(ctx.curve, { segments = 4 })(0.7) end,
    busy = function(ctx) return { curve = ctx.curve } end,
    changes = function() return {} end,
    reenter = function(ctx) return sw.fit(ctx.curve, { segments = 2 }):nseg() end, gives = 2,
  },
  {
    name = "m:compare",
    make = function(ctx)
      ctx.curve = hooked(ctx)
      ctx.model = sw.fit(plain, { segments = 5 })
    end,
    run = function(ctx) return ctx.model:compare(ctx.curve).max_abs end,
    busy = function(ctx) return { curve = ctx.curve, model = ctx.model } end,
    changes = function(ctx)
      return { { "m:extend", function() ctx.model:extend("hold") end, "cannot change" } }
    end,
    reenter = function(ctx) return ctx.model:compare(plain).max_abs end,
    gives = function(ctx) return ctx.model:compare(plain).max_abs end,
  },
  {
    name = "c(x)",
    make = function(ctx) ctx.curve = hooked(ctx) end,
    run = function(ctx) return ctx.curve(0.7) end,
    busy = function(ctx) return { curve = ctx.curve } end,
    changes = function() return {} end,
    reenter = function(ctx) return ctx.curve(0.5) end, gives = shockley(0.5),
  },
  {
    name = "c:eval(array)",
    make = function(ctx) ctx.curve = hooked(ctx) end,
    run = function(ctx) return ctx.curve:eval(sw.array { 0.5, 0.7 })[2] end,
    busy = function(ctx) return { curve = ctx.curve } end,
    changes = function() return {} end,
    reenter = function(ctx) return ctx.curve:eval({ 0.5 })[1] end, gives = shockley(0.5),
  },
  {
    name = "c:deriv",
    make = function(ctx) ctx.curve = hooked(ctx) end,
    run = function(ctx) return ctx.curve:deriv(0.7) end,
    busy = function(ctx) return { curve = ctx.curve } end,
    changes = function() return {} end,
    reenter = function(ctx) return ctx.curve(0.5) end, gives = shockley(0.5),
  },
  {
    name = "net:solve{exact = true}",
    make = function(ctx)
      ctx.curve = hooked(ctx)
      ctx.net = exact_net(ctx)
    end,
    run = function(ctx) return ctx.net:solve { exact = true }.i.DIODE end,
    busy = function(ctx) return { curve = ctx.curve, network = ctx.net._c } end,
    changes = function(ctx)
      local net = ctx.net
      return {
        { "net:resistor", function() net:resistor("RX", "a", "0", 10) end, REFUSED_CHANGE },
        { "net:vsource", function() net:vsource("VX", "b", "0", 1) end, REFUSED_CHANGE },
        { "net:element", function() net:element("DX", "a", "0", model_of_plain) end,
          REFUSED_CHANGE },
        { "net:set", function() net:set("VS", 1) end, REFUSED_CHANGE },
        { "net:sweep", function() net:sweep("VS", { 1, 2 }) end, REFUSED_SOLVE },
        { "net:montecarlo", function() net:montecarlo({ RB = 0.1 }, { runs = 2 }) end,
          REFUSED_SOLVE },
      }
    end,
    reenter = function(ctx) return ctx.net:solve().i.DIODE end, gives = REFUSED_SOLVE,
  },
}

-- What the callback does, and what the disturbed run must give: "same"
-- (the undisturbed answer) or an error with the text given.
local attacks = {
  { name = "raises an error", hook = function() error("hostile: boom", 0) end,
    expect = "hostile: boom" },
  { name = "returns normally", hook = function() end, expect = "same" },
  { name = "collects garbage", expect = "same",
    hook = function()
      collectgarbage("collect")
      collectgarbage("collect")
    end },
  { name = "frees what is in use (refused)", expect = "same",
    hook = function(ctx)
      ctx.refusals = {}
      for what, obj in pairs(ctx.entry.busy(ctx)) do
        local ok, err = pcall(obj.free, obj)
        ctx.refusals[what] = not ok and tostring(err) or "not refused"
      end
    end },
  -- the computation goes on with the memory it holds; the next look at a
  -- collected object (a second pass over the curve, the result's listing)
  -- may refuse it
  { name = "calls __gc by hand (deferred)", expect = "same or free", frees = true,
    hook = function(ctx)
      ctx.hidden = {}
      for what, obj in pairs(ctx.entry.busy(ctx)) do
        ctx.hidden[what] = getmetatable(obj)
        debug.getmetatable(obj).__gc(obj)
      end
    end },
  { name = "changes what is being computed (refused)", expect = "same",
    hook = function(ctx)
      ctx.changed = {}
      for _, c in ipairs(ctx.entry.changes(ctx)) do
        local ok, err = pcall(c[2])
        ctx.changed[#ctx.changed + 1] = { label = c[1], ok = ok, err = tostring(err),
          want = c[3] }
      end
    end },
  { name = "re-enters the module", expect = "same",
    hook = function(ctx)
      ctx.nested = table.pack(pcall(ctx.entry.reenter, ctx))
      -- an unrelated network solves inside the callback
      local other = sw.network()
      other:vsource("VO", "p", "0", 2):resistor("RO", "p", "0", 4)
      ctx.other = other:solve().i.RO
    end },
  { name = "yields (inside a coroutine)", expect = "yield", in_coroutine = true,
    hook = function() coroutine.yield() end },
}

-- Runs the entry for the attack: ok, value (or the error message).
local function disturbed(entry, attack)
  local ctx = { entry = entry, hook = attack.hook }
  entry.make(ctx)
  if attack.in_coroutine then
    local co = coroutine.create(function() return entry.run(ctx) end)
    local ok, v = coroutine.resume(co)
    assert.are.equal("dead", coroutine.status(co))
    return ctx, ok, v
  end
  local ok, v = pcall(entry.run, ctx)
  return ctx, ok, v
end

-- The objects after the attack: each works (a second run, whose hook has
-- fired, gives the answer) or, when the attack freed them, refuses.
local function check_after(entry, attack, ctx, ref)
  local ok, v = pcall(entry.run, ctx)
  if attack.frees then
    assert.is_false(ok)
    assert.truthy(tostring(v):find("free", 1, true), tostring(v))
    for what, obj in pairs(entry.busy(ctx)) do
      assert.matches("freed", tostring(obj), 1, true)
      assert.is_nil(ctx.hidden[what].__gc) -- getmetatable hides __gc
    end
    return
  end
  assert.is_true(ok, tostring(v))
  -- the same computation on the same inputs: equal to rounding (1e-12 relative)
  assert.is.near(ref, v, 1e-12 * math.abs(ref))
  -- nothing is left busy: every object frees now
  for _, obj in pairs(entry.busy(ctx)) do assert.has_no.errors(function() obj:free() end) end
end

local function check_callback_effects(entry, attack, ctx)
  for what, msg in pairs(ctx.refusals or {}) do
    assert.truthy(msg:find(("segwise.%s:free: the %s is in use"):format(what, what), 1, true),
      msg)
  end
  for _, c in ipairs(ctx.changed or {}) do
    assert.is_false(c.ok, c.label .. " was not refused")
    assert.truthy(c.err:find(c.want, 1, true), c.err)
  end
  if ctx.nested then
    local gives = entry.gives
    if type(gives) == "function" then gives = gives(ctx) end
    if type(gives) == "string" then
      assert.is_false(ctx.nested[1])
      assert.truthy(tostring(ctx.nested[2]):find(gives, 1, true), tostring(ctx.nested[2]))
    else
      assert.is_true(ctx.nested[1], tostring(ctx.nested[2]))
      -- a nested call of the same kind: the exact value (1e-12 relative)
      assert.is.near(gives, ctx.nested[2], 1e-12 * math.abs(gives))
    end
    assert.is.near(0.5, ctx.other, 1e-15) -- 2 V across 4 ohm (Ohm's law)
  end
  if attack.name:find("changes", 1, true) and entry.name:find("exact", 1, true) then
    assert.are.equal(3, #ctx.net:info().elements) -- VS, RB and DIODE only
  end
end

describe("segwise: hostile callbacks", function()
  for _, entry in ipairs(entries) do
    describe(entry.name, function()
      local ref
      setup(function()
        local ctx = { entry = entry, hook = function() end }
        entry.make(ctx)
        ref = entry.run(ctx)
      end)
      for _, attack in ipairs(attacks) do
        it("a callback that " .. attack.name, function()
          local ctx, ok, v = disturbed(entry, attack)
          if attack.expect == "same" or (attack.expect == "same or free" and ok) then
            assert.is_true(ok, tostring(v))
            assert.is.near(ref, v, 1e-12 * math.abs(ref)) -- undisturbed: equal to rounding
          else
            assert.is_false(ok)
            local want = attack.expect == "same or free" and "used after free()" or attack.expect
            assert.truthy(tostring(v):find(want, 1, true), tostring(v))
          end
          check_callback_effects(entry, attack, ctx)
          check_after(entry, attack, ctx, ref)
        end)
      end
    end)
  end

  describe("metatables", function()
    it("getmetatable hands out no __gc or __close, only the type's name", function()
      local objects = { plain, model_of_plain, sw.array(2), sw.network()._c }
      local names = { "segwise.Curve", "segwise.Model", "segwise.Array", "segwise.Network" }
      for k, obj in ipairs(objects) do
        local mt = getmetatable(obj)
        assert.are.equal(names[k], mt.__name)
        assert.is_nil(mt.__gc)
        assert.is_nil(mt.__close)
        assert.is_nil(mt.__index)
        assert.has_error(function() setmetatable(obj, {}) end)
      end
    end)

    it("an object collected by hand is safe on every method", function()
      local m = sw.fit(plain, { segments = 3 })
      debug.getmetatable(m).__gc(m)
      debug.getmetatable(m).__gc(m) -- twice: idempotent
      for _, f in ipairs { "nseg", "knots", "canonical", "inverse", "copy", "eval" } do
        raises("free", m[f], m, 0.5)
      end
      raises("free", m.seg, m, 1)
      raises("free", m.compare, m, plain)
      assert.matches("freed", tostring(m))
      local c = sw.curve.fn(shockley, { lo = 0, hi = 1 })
      debug.getmetatable(c).__gc(c)
      raises("free", c.eval, c, 0.5)
      raises("free", sw.fit, c, { segments = 2 })
      local a = sw.array { 1, 2 }
      debug.getmetatable(a).__gc(a)
      raises("free", function() return a[1] end)
      raises("free", model_of_plain.eval, model_of_plain, a)
    end)
  end)

  describe("lists read by the binding while it holds pointers", function()
    local function sweep_net()
      local net = sw.network()
      net:vsource("VS", "top", "0", 5)
      net:resistor("RB", "top", "a", 1000)
      net:element("DIODE", "a", "0", model_of_plain)
      return net
    end

    it("a sweep's out list is read raw: its metamethods cannot free the values", function()
      local net, values = sweep_net(), sw.array { 1, 2, 3 }
      local out = setmetatable({}, {
        __len = function() values:free(); return 1 end,
        __index = function() values:free(); return "i.DIODE" end })
      raises("out must list at least one quantity", net.sweep, net, "VS", values, { out = out })
      assert.are.equal(3, #values) -- untouched
      local res = net:sweep("VS", values, { out = { "i.DIODE" } })
      local one = net:sweep("VS", { 3 })[1].i.DIODE
      assert.is.near(one, res[1][3], 1e-15 * math.abs(one)) -- same point, same sums
    end)

    it("values whose metamethods change the network are refused cleanly", function()
      local net = sweep_net()
      local values = setmetatable({}, {
        __len = function() return 2 end,
        __index = function(_, k)
          net:resistor("RX" .. k, "a", "0", 1)
          return k
        end })
      raises(REFUSED_CHANGE, net.sweep, net, "VS", values, { out = { "i.DIODE" } })
      raises(REFUSED_CHANGE, net.sweep, net, "VS", values)
      assert.are.equal(3, #net:info().elements)
      assert.are.equal(2, net:sweep("VS", { 1, 2 }, { out = { "v.a" } }).n) -- still works
    end)

    it("values whose metamethods free a pinned array are refused cleanly", function()
      local net, held = sweep_net(), sw.array { 1, 2 }
      local values = setmetatable({}, {
        __len = function() return 2 end,
        __index = function(_, k)
          collectgarbage()
          return held[k]
        end })
      local res = net:sweep("VS", values, { out = { "i.DIODE" } })
      assert.are.equal(2, res.n)
      -- a Monte Carlo out list, likewise read raw
      local out = setmetatable({}, { __index = function() net:set("VS", 9); return "v.a" end })
      raises("out must list at least one quantity", net.montecarlo, net, { RB = 0.1 },
        { runs = 3, out = out })
      assert.are.equal(5, net:info().elements[1].value)
    end)

    it("a finalizer run inside a callback may free what is not in use", function()
      local x = sw.array { 0.5, 0.7 }
      local ctx = {}
      ctx.hook = function()
        setmetatable({}, { __gc = function() x:free() end })
        collectgarbage("collect")
      end
      local y = hooked(ctx):eval(x) -- x was copied before the callback ran
      assert.is.near(shockley(0.7), y[2], 1e-12 * shockley(0.7))
      raises("free", function() return x[1] end)
    end)
  end)
end)
