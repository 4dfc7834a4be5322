-- sw.array: contiguous doubles in a userdata (csrc/bind/array.c, csrc/bind/read.c).
local sw = require "segwise"

local raises = require("helpers.files").raises

describe("segwise.array", function()
  describe("construction", function()
    it("sw.array(n) gives n zeros", function()
      local a = sw.array(5)
      assert.are.equal(5, #a)
      for i = 1, 5 do assert.are.equal(0, a[i]) end
    end)

    it("sw.array(0) is empty", function()
      local a = sw.array(0)
      assert.are.equal(0, #a)
      assert.are.same({}, a:totable())
    end)

    it("sw.array(table) copies the numbers", function()
      local t = { 1.5, -2, 1e-300, 3 }
      local a = sw.array(t)
      assert.are.equal(4, #a)
      assert.are.same(t, a:totable())
      t[1] = 99
      assert.are.equal(1.5, a[1])
    end)

    it("sw.array(array) copies an array", function()
      local a = sw.array { 1, 2 }
      local b = sw.array(a)
      b[1] = 7
      assert.are.equal(1, a[1])
      assert.are.equal(7, b[1])
    end)

    local bad = {
      { "a negative size", -1, "size -1 is negative" },
      { "a fractional size", 2.5, "size 2.5 is not a whole number" },
      { "an absurd size (fails at once, allocating nothing)", 1e12, "is more than the limit" },
      { "a string", "abc",
        "bad argument #1 (a size, a table of numbers or an array expected, got string)" },
      { "nil", nil, "got nil" },
      { "a table with a string", { 1, "x", 3 }, "element [2] must be a number (got string)" },
      { "a table with NaN", { 1, 2, 0 / 0 }, "element [3] is not finite" },
      { "a table with infinity", { -math.huge }, "element [1] is not finite" },
    }
    for _, case in ipairs(bad) do
      it("refuses " .. case[1], function()
        local err = raises(case[3], sw.array, case[2])
        assert.is_truthy(err:find("segwise.array: ", 1, true), err)
      end)
    end
  end)

  describe("indexing", function()
    it("gets and sets 1-based", function()
      local a = sw.array(3)
      a[1], a[2], a[3] = 10, 20, 30
      assert.are.same({ 10, 20, 30 }, a:totable())
      a[2.0] = 5 -- a float with an integer value is an index
      assert.are.equal(5, a[2])
    end)

    local bad = {
      { "get index 0", function(a) return a[0] end, "index 0 out of range 1..3" },
      { "get past the end", function(a) return a[4] end, "index 4 out of range 1..3" },
      { "get a fractional index",
        function(a) return a[1.5] end, "index 1.5 is not a whole number" },
      { "set index 0", function(a) a[0] = 1 end, "index 0 out of range 1..3" },
      { "set past the end", function(a) a[4] = 1 end, "index 4 out of range 1..3" },
      { "set a string key", function(a) a.x = 1 end, "index must be a whole number (got string)" },
      { "get a boolean key",
        function(a) return a[true] end, "index must be a whole number (got boolean)" },
      { "set NaN", function(a) a[2] = 0 / 0 end, "value for [2] is not finite" },
      { "set infinity", function(a) a[3] = math.huge end, "value for [3] is not finite" },
      { "set a string",
        function(a) a[1] = "1x" end, "value for [1] must be a number (got string)" },
      { "set nil", function(a) a[1] = nil end, "value for [1] must be a number (got nil)" },
    }
    for _, case in ipairs(bad) do
      it("refuses to " .. case[1], function()
        raises(case[3], case[2], sw.array { 1, 2, 3 })
      end)
    end

    it("pairs walks the elements in order", function()
      local seen = {}
      for i, v in pairs(sw.array { 4, 5, 6 }) do seen[i] = v end
      assert.are.same({ 4, 5, 6 }, seen)
    end)
  end)

  describe(":slice", function()
    local a = sw.array { 1, 2, 3, 4, 5 }
    it("copies a[i..j]", function()
      local s = a:slice(2, 4)
      assert.are.same({ 2, 3, 4 }, s:totable())
      s[1] = 99
      assert.are.equal(2, a[2])
    end)
    it("runs to the end without j", function()
      assert.are.same({ 4, 5 }, a:slice(4):totable())
    end)
    it("is empty for i = j + 1", function()
      assert.are.equal(0, #a:slice(6))
      assert.are.equal(0, #a:slice(3, 2))
    end)
    it("refuses a start out of range", function()
      raises("start 0 out of range 1..6", a.slice, a, 0)
      raises("start 7 out of range 1..6", a.slice, a, 7)
    end)
    it("refuses an end out of range", function()
      -- an end one below the start is the empty slice, so the range starts there
      raises("end 6 out of range 1..5", a.slice, a, 2, 6)
      raises("end 0 out of range 1..5", a.slice, a, 2, 0)
      raises("end must be a whole number (got string)", a.slice, a, 2, "x")
    end)
  end)

  describe("release", function()
    it(":free is idempotent and later use is an error", function()
      local a = sw.array { 1, 2 }
      a:free()
      a:free()
      raises("array used after free()", function() return a[1] end)
      raises("array used after free()", function() a[1] = 1 end)
      raises("array used after free()", function() return #a end)
      raises("array used after free()", a.totable, a)
      raises("array used after free()", a.slice, a, 1)
      raises("array used after free()", sw.array, a)
      assert.are.equal("segwise.array (freed)", tostring(a))
    end)

    it("<close> releases at the end of the scope", function()
      local keep
      do
        local a <close> = sw.array { 1, 2, 3 }
        keep = a
        assert.are.equal(3, #a)
      end
      raises("array used after free()", function() return keep[1] end)
    end)

    it("collecting freed and live arrays is safe", function()
      for i = 1, 50 do
        local a = sw.array(1000)
        if i % 2 == 0 then a:free() end
      end
      collectgarbage()
      collectgarbage()
      assert.are.equal(2, #sw.array(2))
    end)

    it(":free on something else is an error", function()
      local a = sw.array(1)
      raises("a segwise array expected, got table", a.free, {})
    end)
  end)

  describe("tostring", function()
    it("shows short arrays whole", function()
      assert.are.equal("segwise.array(3): {1.0, 2.5, -3.0}", tostring(sw.array { 1, 2.5, -3 }))
    end)
    it("elides long arrays", function()
      local a = sw.array(100)
      for i = 1, 100 do a[i] = i end
      assert.are.equal("segwise.array(100): {1.0, 2.0, 3.0, 4.0, 5.0, 6.0, ..., 100.0}",
        tostring(a))
    end)
  end)

  describe("sw.array.read", function()
    local dir = os.tmpname()
    os.remove(dir)
    assert(os.execute("mkdir -p '" .. dir .. "'"))
    teardown(function() os.execute("rm -rf '" .. dir .. "'") end)
    local path = dir .. "/col.csv"
    local f = assert(io.open(path, "wb"))
    f:write("t_s,V_mV\n0,1.5\n0.5,2.5\n1,-3\n")
    f:close()

    it("reads a column by name, with a scale", function()
      local a = sw.array.read(path, "V_mV", { scale = 1e-3 })
      assert.are.same({ 1.5e-3, 2.5e-3, -3e-3 }, a:totable())
    end)
    it("reads a column by number, the first by default", function()
      assert.are.same({ 1.5, 2.5, -3 }, sw.array.read(path, 2):totable())
      assert.are.same({ 0, 0.5, 1 }, sw.array.read(path):totable())
    end)
    it("names the file line and column on errors", function()
      raises('col.csv:1: no column named "V" (columns: "t_s", "V_mV")', sw.array.read, path, "V")
      raises("segwise.array.read: scale must be finite and non-zero", sw.array.read, path, 1,
        { scale = 0 })
      raises("unknown option 'scal'", sw.array.read, path, 1, { scal = 2 })
      raises("path must be a string", sw.array.read, nil)
      raises('cannot open "' .. dir .. '/none.csv"', sw.array.read, dir .. "/none.csv")
    end)
  end)

  describe("as input elsewhere", function()
    it("curve.samples takes arrays", function()
      local c = sw.curve.samples(sw.array { 0, 1, 2 }, sw.array { 0, 10, 40 })
      -- linear between samples: halfway from 10 to 40 is 25 (exact)
      assert.are.equal(25, c(1.5))
    end)
  end)
end)
