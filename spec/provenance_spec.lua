-- Provenance travels with the model: m:save writes how a fitted model was
-- made as "# fit ...:" comment lines, sw.pwl.load reads them back and
-- m:fit_info() returns them with loaded = true (csrc/core/pwl/pwl_prov.c).
local sw = require "segwise"

local files = require "helpers.files"
local dir, write = files.tmpdir()
local slurp, raises = files.read_all, files.raises

-- A diode law i(v) fitted on its forward knee (parameters invented).
local function diode_fit(opts)
  local c = sw.curve.diode { is = 2e-14, n = 1.7, rs = 0.25 }
  local o = { lo = 0.5, hi = 0.8, segments = 3 }
  for k, v in pairs(opts or {}) do o[k] = v end
  if o.tol then o.segments = nil end
  return sw.fit(c, o), c
end

-- The fields a file keeps, compared bit for bit (%.17g round trips).
local KEPT = { "criterion", "knots", "error", "continuous", "segments", "lo", "hi", "tol",
               "rel_floor", "max_abs", "x_abs", "max_rel", "x_rel", "rms", "made", "source" }

local function same_provenance(want, got)
  for _, k in ipairs(KEPT) do assert.are.equal(want[k], got[k], k) end
  assert.are.same(want.curve, got.curve)
end

local function save_load(m, name)
  local path = dir .. "/" .. name
  m:save(path)
  return sw.pwl.load(path), path
end

describe("provenance in model files", function()
  teardown(function() os.execute("rm -rf '" .. dir .. "'") end)

  describe("a fit states how it was made", function()
    it("fit_info names the curve, its parameters, the range and when", function()
      local m, c = diode_fit()
      local info = m:fit_info()
      assert.are.same(c:params(), info.curve)
      assert.are.equal("diode", info.curve.kind)
      assert.are.equal(0.5, info.lo)
      assert.are.equal(0.8, info.hi)
      assert.is_truthy(info.made:match("^%d%d%d%d%-%d%d%-%d%dT%d%d:%d%d:%d%dZ$"), info.made)
      assert.is_nil(info.loaded)
    end)

    it("a curve read from a file names that file", function()
      local path = write("iv.csv", "v,i\n0.5,1e-5\n0.6,1e-4\n0.7,1e-3\n0.8,1e-2\n")
      local info = sw.fit(sw.curve.read(path), { segments = 2 }):fit_info()
      assert.are.equal(path, info.source)
      assert.are.equal("samples", info.curve.kind)
      assert.are.equal(4, info.curve.count)
    end)
  end)

  describe("save and load", function()
    it("write the provenance as comment lines and read it back with loaded = true", function()
      local m = diode_fit()
      local back, path = save_load(m, "diode.csv")
      local text = slurp(path)
      assert.is_truthy(text:find("\n# fit curve: diode\n", 1, true), text)
      assert.is_truthy(text:find("\n# fit curve is: 2e-14\n", 1, true), text)
      assert.is_truthy(text:find("\n# fit criterion: minimax\n", 1, true), text)
      assert.is_truthy(text:find("\n# fit range: 0.5 0.8\n", 1, true), text)
      assert.is_truthy(text:find("\n# fit max abs: [-+.%deE]+ at x = [-+.%deE]+\n"), text)
      local info = back:fit_info()
      assert.is_true(info.loaded)
      same_provenance(m:fit_info(), info)
    end)

    it("keep a tolerance fit's relative error, floor and count", function()
      local m = diode_fit { tol = 0.02, error = "rel", rel_floor = 1e-9 }
      local info = save_load(m, "rel.csv"):fit_info()
      same_provenance(m:fit_info(), info)
      assert.are.equal("rel", info.error)
      assert.are.equal(0.02, info.tol)
      assert.are.equal(1e-9, info.rel_floor)
    end)

    it("survive a second save of the loaded model, bit for bit", function()
      local path = write("iv2.csv", "v,i\n0.5,1e-5\n0.6,1e-4\n0.7,1e-3\n0.8,1e-2\n")
      local m = sw.fit(sw.curve.read(path), { segments = 2, criterion = "lsq" })
      local once = save_load(m, "once.csv")
      local twice = save_load(once, "twice.csv")
      same_provenance(m:fit_info(), twice:fit_info())
      assert.is_true(twice:fit_info().loaded)
    end)

    it("a model made without a fit has none, and a file without it loads as before", function()
      local plain = sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 0 } }
      local back, path = save_load(plain, "plain.csv")
      assert.is_nil(slurp(path):find("# fit", 1, true))
      assert.is_nil(back:fit_info())
      -- a file in the layout of earlier versions
      local old = sw.pwl.load(write("old.csv", "# segwise 0.1.0 piecewise-linear model\n"
        .. "# segments: 1\nx,y_left,y_right,slope_right\n0,0,0,2\n1,2,2,2\n"))
      assert.is_nil(old:fit_info())
      assert.are.equal(1, old(0.5))
      -- and a file with provenance still loads its knots as before
      local fitted = save_load(diode_fit(), "knots.csv")
      assert.are.equal(3, fitted:nseg())
      assert.is_true(fitted:fit_info().loaded)
    end)
  end)

  describe("bad provenance lines", function()
    local body = "x,y_left,y_right\n0,0,0\n1,1,1\n"
    local cases = {
      { "a stated error that is not a number", "# fit max abs: small\n",
        'p1.csv:1: fit max abs must be a number' },
      { "a negative stated error", "# fit: made by segwise\n# fit max rel: -0.5 at x = 0.2\n",
        "p2.csv:2: fit max rel must not be negative" },
      { "a range that is not lo below hi", "# fit range: 1 0\n", "p3.csv:1: fit range must be" },
      { "text after the position", "# fit max abs: 0.1 at x = 2 volts\n",
        "p4.csv:1: fit max abs must be" },
      { "continuous neither true nor false", "# fit continuous: maybe\n",
        'p5.csv:1: fit continuous must be true or false (found "maybe")' },
      { "a key given twice", "# fit criterion: minimax\n# x unit: V\n# fit criterion: lsq\n",
        "p6.csv:3: fit criterion is given twice (first on line 1)" },
      { "a curve parameter given twice", "# fit curve: diode\n# fit curve n: 1\n# fit curve n: 2\n",
        "p7.csv:3: fit curve n is given twice (first on line 2)" },
      { "a curve parameter without a value", "# fit curve is:\n",
        "p8.csv:1: fit curve is has no value" },
      { "a non-finite number", "# fit rms: inf\n", "p9.csv:1: fit rms must be a finite number" },
      { "a tolerance of zero", "# fit tol: 0\n", "p10.csv:1: fit tol must be positive" },
    }
    for i, case in ipairs(cases) do
      it("are refused, naming the file line: " .. case[1], function()
        local err = raises(case[3], sw.pwl.load, write("p" .. i .. ".csv", case[2] .. body))
        assert.is_truthy(err:find("segwise.pwl.load: ", 1, true), err)
      end)
    end

    it("unknown fit keys are plain comments (a later version may state more)", function()
      local m = sw.pwl.load(write("later.csv", "# fit criterion: minimax\n# fit colour: red\n"
        .. "# fitted by hand: yes\n" .. body))
      local info = m:fit_info()
      assert.is_true(info.loaded)
      assert.are.equal("minimax", info.criterion)
      assert.is_nil(info.colour)
      assert.are.equal(1, m:nseg())
    end)
  end)

  describe("save refuses provenance that would not load back", function()
    it("a control character in a stated text names the field", function()
      local m = diode_fit()
      m:fit_info().source = "data\nx,1,2"
      raises("segwise.model:save: fit_info source contains a control character (byte 5)",
        m.save, m, dir .. "/ctl.csv")
      m:fit_info().source = nil
      m:fit_info().max_abs = -1
      raises("segwise.model:save: fit_info max_abs must not be negative",
        m.save, m, dir .. "/neg.csv")
    end)

    it("a failed save leaves the old file and its provenance intact", function()
      local m = diode_fit()
      local path = dir .. "/keep.csv"
      m:save(path)
      local before = slurp(path)
      -- the save runs in a child whose file-size limit (one 512-byte block) cuts it short
      local ok, out = require("helpers.subproc").lua(([[
        local sw = require "segwise"
        local d = sw.curve.diode { is = 1e-12, n = 1.8, rs = 0.5 }
        local m = sw.fit(d, { lo = 0.3, hi = 0.8, segments = 40 })
        print(pcall(m.save, m, %q))
      ]]):format(path), { fsize = 1 })
      assert.is_true(ok, out)
      local said = 'false\tsegwise.model:save: cannot write "' .. path .. '"'
      assert.is_truthy(out:find(said, 1, true), out)
      assert.are.equal(before, slurp(path))
      same_provenance(m:fit_info(), sw.pwl.load(path):fit_info())
    end)
  end)
end)
