-- Specs for segwise.report: SI formatting and parsing, tables, ready-made
-- reports.  Only needs lua/segwise/report.lua (no C module).

local report = require "segwise.report"
local si, parse_si = report.si, report.parse_si

local MU = "\u{00B5}"
local OHM = "\u{03A9}"
local DASH = "\u{2014}"

local files = require "helpers.files"
local tmpname, read_all = files.tmpname, files.read_all

local function exists(path)
  local f = io.open(path, "rb")
  if f then f:close() return true end
  return false
end

-- A small RFC 4180 reader, written here so the CSV writer is checked by
-- an independent parser.
local function parse_csv(s)
  local rows, row, field, i, n = {}, {}, {}, 1, #s
  local quoted = false
  while i <= n do
    local c = s:sub(i, i)
    if quoted then
      if c == '"' then
        if s:sub(i + 1, i + 1) == '"' then field[#field + 1] = '"'; i = i + 1
        else quoted = false end
      else field[#field + 1] = c end
    elseif c == '"' then quoted = true
    elseif c == "," then row[#row + 1] = table.concat(field); field = {}
    elseif c == "\n" or c == "\r" then
      if c == "\r" and s:sub(i + 1, i + 1) == "\n" then i = i + 1 end
      row[#row + 1] = table.concat(field); field = {}
      rows[#rows + 1] = row; row = {}
    else field[#field + 1] = c end
    i = i + 1
  end
  if #field > 0 or #row > 0 then row[#row + 1] = table.concat(field); rows[#rows + 1] = row end
  return rows
end

local function lines_of(s)
  local t = {}
  for l in s:gmatch("([^\n]*)\n") do t[#t + 1] = l end
  return t
end

describe("segwise.report", function()

  describe("si", function()
    -- SI prefixes and symbols are from the SI Brochure, BIPM, 9th edition
    -- (2019), table 7; engineering notation uses the powers of 1000.
    -- Rule checked here: 3 significant digits by default, rounded once,
    -- trailing zeros dropped, a space before the prefixed unit.
    local cases = {
      { 0.00431, "A", nil, "4.31 mA" },
      { 2200, OHM, nil, "2.2 k" .. OHM },
      { 0.61, "W", nil, "610 mW" },
      { 1, "V", nil, "1 V" },
      { 1000, "A", nil, "1 kA" },
      { 999.96, "V", nil, "1 kV" },             -- rounds across the prefix boundary
      { 999.4, "V", nil, "999 V" },
      { 0.000999999, "F", nil, "1 mF" },
      { 0.0009994, "F", nil, "999 " .. MU .. "F" },
      { -0.0012345, "A", nil, "-1.23 mA" },
      { 4.7e-6, "F", nil, "4.7 " .. MU .. "F" },
      { 100e-12, "F", nil, "100 pF" },
      { 1e-15, "C", nil, "1 fC" },
      { 3e-18, "s", nil, "3 as" },
      { 2e-21, "mol", nil, "2 zmol" },
      { 5e-24, "g", nil, "5 yg" },
      { 123456789, "Hz", nil, "123 MHz" },
      { 4.2e9, "Hz", nil, "4.2 GHz" },
      { 1.5e12, "W", nil, "1.5 TW" },
      { 7e15, "J", nil, "7 PJ" },
      { 8e18, "J", nil, "8 EJ" },
      -- %.1e rounds half to even: 12.5 -> 1.2e1? see below
      { 12.5, "V", 2, "13 V" },
      { 4700, "", nil, "4.7k" },                -- no unit: prefix glued to the number
      { 4.31, "A", 5, "4.31 A" },
      { 0.0123456, "A", 5, "12.346 mA" },
      { 0, "V", nil, "0 V" },
      { 1.5e-27, "A", nil, "1.5e-27 A" },       -- below yocto: exponent form
      { 2e27, "Hz", nil, "2e+27 Hz" },
    }
    -- 12.5 is exact in binary, and C's printf rounds exact halves to even:
    -- "%.1e" gives 1.2e+01.  Computed here instead of assumed.
    cases[22][4] = (string.format("%.1e", 12.5) == "1.2e+01") and "12 V" or "13 V"
    for _, c in ipairs(cases) do
      it(string.format("si(%.17g, %q, %s) == %q", c[1], c[2], tostring(c[3]), c[4]), function()
        assert.are.equal(c[4], si(c[1], c[2], c[3]))
      end)
    end

    it("prints NaN and infinities clearly, with the unit", function()
      assert.are.equal("NaN A", si(0 / 0, "A"))
      assert.are.equal("inf V", si(math.huge, "V"))
      assert.are.equal("-inf W", si(-math.huge, "W"))
      assert.are.equal("NaN", si(0 / 0))
    end)

    -- A unit that already carries a prefix prints the number as given
    -- (no second prefix, no scaling); ratios and levels take no prefix.
    local plain = {
      { 0.002, "mA", nil, "0.002 mA" },
      { 1500, "mA", nil, "1500 mA" },
      { 4.7, "k" .. OHM, nil, "4.7 k" .. OHM },
      { 0.25, MU .. "s", nil, "0.25 " .. MU .. "s" },
      { 12.3456, "mW", nil, "12.3 mW" },
      { 3.14159, "mV/K", nil, "3.14 mV/K" },
      { -0.5, "kV", nil, "-0.5 kV" },
      { 2000, "kg", nil, "2000 kg" },
      { 0.05, "%", nil, "0.05 %" },
      { 12.3456, "%", nil, "12.3 %" },
      { 99.96, "%", nil, "100 %" },            -- rounds to 3 digits: 1.00e2
      { 1234.56, "ppm", nil, "1235 ppm" },     -- integer digits are kept
      { -3.0103, "dB", nil, "-3.01 dB" },
      { 0.5, "dBm", nil, "0.5 dBm" },
      { 2e-7, "%", nil, "2e-7 %" },            -- tiny: exponent form, as %g
      { 0.0123456, "ppm", 5, "0.012346 ppm" },
      { 25, "\u{00B0}C", nil, "25 \u{00B0}C" },
      { 30, "\u{00B0}", nil, "30\u{00B0}" },   -- plane angle: no space (SI Brochure)
      { 0, "%", nil, "0 %" },
    }
    for _, c in ipairs(plain) do
      local name = string.format("si(%.17g, %q, %s) == %q", c[1], c[2], tostring(c[3]), c[4])
      it(name .. " (no added prefix)", function() assert.are.equal(c[4], si(c[1], c[2], c[3])) end)
    end

    it("still prefixes units of their own that start with a prefix letter", function()
      assert.are.equal("2 mm", si(0.002, "m"))         -- metre
      assert.are.equal("1.5 kPa", si(1500, "Pa"))      -- pascal, not peta-annum
      assert.are.equal("5 mT", si(0.005, "T"))         -- tesla
      assert.are.equal("20 mmol", si(0.02, "mol"))
      assert.are.equal("1.2 MWh", si(1.2e6, "Wh"))
    end)

    it("tells which units take a prefix", function()
      assert.is_true(report.takes_prefix == nil or report.takes_prefix("A"))
      local si_mod = require "segwise.report.si"
      assert.is_true(si_mod.takes_prefix("A"))
      assert.is_true(si_mod.takes_prefix(""))
      assert.is_true(si_mod.takes_prefix("Pa"))
      assert.is_false(si_mod.takes_prefix("mA"))
      assert.is_false(si_mod.takes_prefix("%"))
      assert.is_false(si_mod.takes_prefix("dBV"))
    end)

    it("reads back a value printed in a prefixed unit, given that unit", function()
      assert.are.equal(0.002, parse_si(si(0.002, "mA"), "mA"))
      assert.are.equal(0.05, parse_si(si(0.05, "%")))
    end)

    it("rejects bad arguments, naming them", function()
      assert.has_error(function() si("1", "A") end,
        "segwise.si: value must be a number (got string)")
      assert.has_error(function() si(1, 5) end, "segwise.si: unit must be a string (got number)")
      assert.has_error(function() si(1, "A", 0) end,
        "segwise.si: digits must be an integer from 1 to 17 (got 0)")
      assert.has_error(function() si(1, "A", 2.5) end)
    end)

    it("never prints 1000 before a prefix, over many magnitudes", function()
      for e = -24, 23 do
        for _, m in ipairs { 0.99951, 0.999951, 0.9996, 1, 9.9996, 99.996, 999.6 } do
          local s = si(m * 10.0 ^ e, "A")
          local mant = s:match("^(%S+)")
          local v = tonumber(mant)
          assert.is_truthy(v, s)
          assert.is_true(math.abs(v) < 1000, s)
        end
      end
    end)
  end)

  describe("parse_si", function()
    local cases = {
      { "4.7k", 4700, "" },
      { "4.7 k" .. OHM, 4700, OHM },
      { "10 mA", 0.01, "A" },
      { "1e-3", 0.001, "" },
      { "2.2uF", 2.2e-6, "F" },
      { "2.2" .. MU .. "F", 2.2e-6, "F" },
      { "2.2\u{03BC}F", 2.2e-6, "F" },          -- Greek small mu, also seen as micro
      { "4.7M", 4.7e6, "" },
      { "4.7 M" .. OHM, 4.7e6, OHM },
      { "1M", 1e6, "" },
      { "1m", 1e-3, "" },
      { "-5.5 V", -5.5, "V" },
      { "  +.5 m ", 5e-4, "" },
      { "12", 12, "" },
      { "1.5e-27 A", 1.5e-27, "A" },
      { "3 pF", 3e-12, "F" },
      { "7 GHz", 7e9, "Hz" },
      -- part marking, common practice for resistors: the letter stands for
      -- the decimal point and gives the multiplier (IEC 60062 style codes)
      { "4k7", 4700, "" },
      { "4K7", 4700, "" },
      { "2R2", 2.2, "" },
      { "R47", 0.47, "" },
      { "1M5", 1.5e6, "" },
      { "4u7", 4.7e-6, "" },
      { "6n8", 6.8e-9, "" },
      { "4k7" .. OHM, 4700, OHM },
    }
    for _, c in ipairs(cases) do
      it(string.format("parse_si(%q) == %.17g", c[1], c[2]), function()
        local v, u = parse_si(c[1])
        -- tolerance: 1e-15 relative (decimal scaling may round once)
        assert.is.near(c[2], v, math.abs(c[2]) * 1e-15)
        assert.are.equal(c[3], u)
      end)
    end

    it("reads 4k7 as exactly 4700", function()
      assert.are.equal(4700, parse_si("4k7"))
      assert.are.equal(4700, parse_si("4.7k"))
    end)

    it("strips an expected unit first when given one", function()
      assert.are.equal(5, parse_si("5 Pa", "Pa"))
      assert.are.equal(5e3, parse_si("5 kPa", "Pa"))
      assert.are.equal(5e15, parse_si("5 Pa"))        -- without it, P is peta
    end)

    it("reads what si prints for NaN and infinities", function()
      local v = parse_si("NaN A")
      assert.is_true(v ~= v)
      assert.are.equal(math.huge, parse_si("inf V"))
      assert.are.equal(-math.huge, parse_si("-inf"))
    end)

    it("passes numbers through", function()
      assert.are.equal(3.25, parse_si(3.25))
    end)

    local bad = { "", "abc", "4.7 k x", "k", "1..2", "1 2", "4k7k", "--1", "1e", "4.7 kk" .. OHM }
    for _, t in ipairs(bad) do
      it(string.format("rejects %q, naming the text", t), function()
        local ok, err = pcall(parse_si, t)
        assert.is_false(ok)
        assert.is_truthy(err:find("segwise.parse_si: cannot read " .. string.format("%q", t),
          1, true), err)
      end)
    end

    it("rejects a non-string, non-number", function()
      assert.has_error(function() parse_si({}) end,
        "segwise.parse_si: expected a string (got table)")
    end)

    -- SI writes mega as M and milli as m (SI Brochure, 9th edition, table 7);
    -- the three-letter mega suffix is refused with a hint, in any case.
    for _, t in ipairs { "4.7meg", "4.7MEG" .. OHM, "1 Meg", "2megohm", "3.3meg", "1e3meg" } do
      it(string.format("refuses %q and says to write M", t), function()
        local ok, err = pcall(parse_si, t)
        assert.is_false(ok)
        local head = "segwise.parse_si: cannot read " .. string.format("%q", t)
        assert.is_truthy(err:find(head, 1, true), err)
        assert.is_truthy(err:find("write M for mega", 1, true), err)
      end)
    end

    it("refuses the mega suffix even with an expected unit", function()
      local ok, err = pcall(parse_si, "4.7megohm", "ohm")
      assert.is_false(ok)
      assert.is_truthy(err:find("write M for mega", 1, true), err)
    end)

    it("keeps M and m apart: mega and milli", function()
      assert.are.equal(4.7e6, parse_si("4.7M"))
      assert.is.near(4.7e-3, parse_si("4.7m"), 4.7e-3 * 1e-15)   -- one decimal rounding
      assert.are.equal(1.5e6, parse_si("1M5"))
      assert.is.near(1.5e-3, parse_si("1m5"), 1.5e-3 * 1e-15)
    end)

    it("round-trips si() within the printed precision (seeded random values)", function()
      math.randomseed(20261202)
      for _ = 1, 2000 do
        local x = (math.random() * 2 - 1) * 10.0 ^ math.random(-26, 26)
        for _, d in ipairs { 1, 3, 6 } do
          local s = si(x, "A", d)
          local back, unit = parse_si(s)
          assert.are.equal("A", unit)
          -- d significant digits: half a unit in the last place is at most
          -- 0.5 * 10^(1-d) of the value
          assert.is.near(x, back, math.abs(x) * 0.5 * 10.0 ^ (1 - d) * (1 + 1e-9))
        end
      end
    end)
  end)

  describe("table", function()
    local rows = {
      { name = "DIODE", i = 0.00431, v = 0.65, p = 0.0028, n = 3 },
      { name = 'RSER, "load"', i = 0.0123, v = 12.2, p = 0.15, n = 10 },
      { name = "ZENER", i = 0 / 0 },
    }
    local cols = { "name", { name = "I", key = "i", unit = "A" },
      { name = "V", key = "v", unit = "V", fmt = "%.3f" },
      { name = "P", key = "p", unit = "W" }, { name = "n", key = "n" },
      { name = "2I", fn = function(r) return 2 * r.i end, unit = "A" } }

    it("text: one prefix per column, shown in the header; columns aligned", function()
      local s = report.table(rows, cols)
      local l = lines_of(s)
      assert.is_truthy(l[1]:find("I (mA)", 1, true))
      assert.is_truthy(l[1]:find("V (V)", 1, true))
      assert.is_truthy(l[1]:find("P (mW)", 1, true))
      assert.is_truthy(l[1]:find("2I (mA)", 1, true))
      assert.is_truthy(l[3]:find("4.31", 1, true))
      assert.is_truthy(l[3]:find("0.650", 1, true))   -- fmt = "%.3f", base unit
      assert.is_truthy(l[4]:find("150", 1, true))     -- 0.15 W in mW
      assert.is_truthy(l[4]:find("24.6", 1, true))    -- fn column: 2 * 12.3 mA
      assert.is_truthy(l[5]:find("NaN", 1, true))
      -- right-aligned numeric column: the I values end in the same column
      local e3 = select(2, l[3]:find("4.31", 1, true))
      local e4 = select(2, l[4]:find("12.3", 1, true))
      assert.are.equal(utf8.len(l[3]:sub(1, e3)), utf8.len(l[4]:sub(1, e4)))
      -- a rule line under the header
      assert.is_truthy(l[2]:find("^\u{2500}+"))
    end)

    it("text with units = 'cells': each value carries its own prefix", function()
      local s = report.table(rows, cols, { units = "cells" })
      assert.is_truthy(s:find("4.31 mA", 1, true))
      assert.is_truthy(s:find("150 mW", 1, true))
      assert.is_truthy(s:find("V (V)", 1, true))       -- fmt column keeps the unit in the header
    end)

    it("csv: RFC 4180 quoting and raw numbers, read back by an independent parser", function()
      local s = report.table(rows, cols, { format = "csv" })
      local t = parse_csv(s)
      assert.are.equal(4, #t)
      assert.are.same({ "name", "I (A)", "V (V)", "P (W)", "n", "2I (A)" }, t[1])
      assert.are.equal('RSER, "load"', t[3][1])
      assert.are.equal(0.00431, tonumber(t[2][2]))
      assert.are.equal("3", t[2][5])
      assert.are.equal("NaN", t[4][2])
      assert.are.equal("", t[4][3])
      assert.is_truthy(s:find('"RSER, ""load"""', 1, true))
    end)

    it("csv: %.6g by default, full precision on request", function()
      local r = { { x = 1 / 3 } }
      assert.are.equal("x\n0.333333\n", report.table(r, { "x" }, { format = "csv" }))
      local full = report.table(r, { "x" }, { format = "csv", full = true })
      assert.are.equal(1 / 3, tonumber(parse_csv(full)[2][1]))
    end)

    it("csv: quotes fields with newlines and edge spaces", function()
      local s = report.table({ { a = "two\nlines", b = " pad" } }, { "a", "b" }, { format = "csv" })
      local t = parse_csv(s)
      assert.are.equal("two\nlines", t[2][1])
      assert.are.equal(" pad", t[2][2])
    end)

    it("markdown: header, alignment row, escaped pipes", function()
      local s = report.table({ { a = "x|y", b = 1.5 } },
        { "a", { name = "b", key = "b", unit = "V" } },
        { format = "markdown" })
      local l = lines_of(s)
      assert.is_truthy(l[1]:match("^| a +| +b %(V%) |$"), l[1])
      assert.is_truthy(l[2]:match("^| :%-+ | %-+: |$"), l[2])
      assert.is_truthy(l[3]:find("x\\|y", 1, true))
      assert.is_truthy(l[3]:find("1.5", 1, true))
    end)

    it("reads nested values through dotted keys (sweep rows)", function()
      local sweep = { { vb = 4.5, i = { DIODE = 0.010 } }, { vb = 5.5, i = { DIODE = 0.014 } } }
      local t = parse_csv(report.table(sweep,
        { "vb", { name = "I(DIODE)", key = "i.DIODE", unit = "A" } },
        { format = "csv" }))
      assert.are.same({ "vb", "I(DIODE) (A)" }, t[1])
      assert.are.equal(0.014, tonumber(t[3][2]))
    end)

    it("fmt may be a function of the value", function()
      local s = report.table({ { ok = true } },
        { { name = "ok", fmt = function(v) return v and "yes" or "no" end } })
      assert.is_truthy(s:find("yes", 1, true))
    end)

    it("writes to a path atomically and returns the text", function()
      local path = tmpname()
      local s = report.table(rows, cols, { format = "csv", out = path })
      assert.are.equal(s, read_all(path))
      assert.is_false(exists(path .. ".tmp"))
      os.remove(path)
    end)

    it("leaves an existing file untouched when the write fails", function()
      local path = tmpname()
      local f = assert(io.open(path, "w")); f:write("old"); f:close()
      -- a child under a file-size limit of one 512-byte block: the write fails half way
      local ok, out = require("helpers.subproc").lua(([[
        local report = require "segwise.report"
        local rows = {}
        for i = 1, 400 do rows[i] = { a = i / 7, b = i * 1.5 } end
        print(pcall(report.table, rows, { "a", "b" }, { out = %q }))
      ]]):format(path), { fsize = 1 })
      assert.is_true(ok, out)
      assert.is_truthy(out:find("cannot write", 1, true), out)
      assert.are.equal("old", read_all(path))
      os.remove(path)
    end)

    it("writes to an open file handle", function()
      local f = assert(io.tmpfile())
      local s = report.table(rows, { "name" }, { out = f })
      f:seek("set")
      assert.are.equal(s, f:read("a"))
      f:close()
    end)

    it("rejects bad input, naming the part at fault", function()
      assert.has_error(function() report.table(rows, cols, { format = "xml" }) end,
        "segwise.report.table: format must be 'text', 'csv' or 'markdown' (got xml)")
      assert.has_error(function() report.table(rows, {}) end,
        "segwise.report.table: columns must be a non-empty list")
      assert.has_error(function() report.table({ 1 }, cols) end,
        "segwise.report.table: row 1 must be a table (got number)")
      assert.has_error(function() report.table(rows, { 42 }) end,
        "segwise.report.table: column 1 must be a name or a table (got number)")
      assert.has_error(function() report.table(rows, { { name = "x", align = "up" } }) end,
        "segwise.report.table: column 'x': align must be 'left', 'right' or 'center'")
      local ok, err = pcall(report.table, rows,
        { { name = "bad", fn = function(r) return r.nope.x end } })
      assert.is_false(ok)
      assert.is_truthy(err:find("column 'bad', row 1", 1, true), err)
      ok, err = pcall(report.table, { { s = "x" } }, { { name = "s", fmt = "%d" } })
      assert.is_false(ok)
      assert.is_truthy(err:find("column 's', row 1: format", 1, true), err)
      assert.has_error(function() report.table(rows, { "name" }, { out = {} }) end,
        "segwise.report.table: out must be a file path or an open file handle")
    end)
  end)

  describe("table, wide columns", function()
    -- Wide columns (rule in segwise.report.tables, human_cells): a prefixed
    -- column whose non-zero magnitudes span more than 4 decades prints each
    -- cell with its own prefix; otherwise one prefix in the header.  The
    -- expected strings follow the SI prefixes (BIPM SI Brochure, table 7).
    describe("one prefix per column, or per cell when the column spans > 4 decades", function()
      local cases = {
        -- values, expected header, expected cells
        { "2 decades", { 0.001, 0.1 }, "g (mS)", { "1", "100" } },
        { "zeros do not count", { 0, 0.001, 0.1 }, "g (mS)", { "0", "1", "100" } },
        { "exactly 4 decades", { 1, 10000 }, "g (kS)", { "0.001", "10" } },
        { "4.1 decades", { 1, 12600 }, "g", { "1 S", "12.6 kS" } },
        { "6 decades", { 1e-6, 1 }, "g", { "1 " .. MU .. "S", "1 S" } },
        { "6 decades, signs mixed", { -1e-6, 0.5 }, "g", { "-1 " .. MU .. "S", "500 mS" } },
        { "NaN and inf do not count", { 0 / 0, 1 / 0, 0.002, 0.02 }, "g (mS)",
          { "NaN", "inf", "2", "20" } },
        -- the Norton g column of a 15-segment diode model: 60.1 kOhm .. 128 mOhm
        { "a diode's g column", { 60100, 538, 0.128 }, "g",
          { "60.1 k" .. OHM, "538 " .. OHM, "128 m" .. OHM } },
      }
      for _, c in ipairs(cases) do
        it(c[1], function()
          local rows = {}
          for r, v in ipairs(c[2]) do rows[r] = { g = v } end
          local unit = c[1] == "a diode's g column" and OHM or "S"
          local hdr = c[3]:gsub("S%)$", unit .. ")")
          for _, format in ipairs { "text", "markdown" } do
            local l = lines_of(report.table(rows, { { name = "g", unit = unit } },
              { format = format }))
            local head = format == "markdown" and l[1]:match("^| *(.-) *|$")
              or l[1]:match("^%s*(.-)%s*$")
            assert.are.equal(hdr, head)
            for r, want in ipairs(c[4]) do
              local cell = format == "markdown" and l[r + 2]:match("^| *(.-) *|$")
                or l[r + 2]:match("^%s*(.-)%s*$")
              assert.are.equal(want, cell, c[1] .. " row " .. r .. " (" .. format .. ")")
            end
          end
        end)
      end

      it("units = 'header' keeps one prefix; span moves the threshold", function()
        local rows = { { g = 1e-6 }, { g = 1 } }
        local l = lines_of(report.table(rows, { { name = "g", unit = "S" } }, { units = "header" }))
        assert.are.equal("g (S)", l[1]:match("^%s*(.-)%s*$"))
        assert.are.equal("0.000001", l[3]:match("^%s*(.-)%s*$"))
        l = lines_of(report.table(rows, { { name = "g", unit = "S" } }, { span = 7 }))
        assert.are.equal("g (S)", l[1]:match("^%s*(.-)%s*$"))
        l = lines_of(report.table({ { g = 0.001 }, { g = 0.1 } }, { { name = "g", unit = "S" } },
          { span = 1 }))
        assert.are.equal("1 mS", l[3]:match("^%s*(.-)%s*$"))
      end)

      it("fmt, percent and si = false columns never switch; other columns keep their own "
        .. "mode", function()
        local rows = { { a = 1e-6, b = 1e-6, c = 1e-6, d = 1e-3 },
          { a = 1, b = 1, c = 1, d = 0.1 } }
        local l = lines_of(report.table(rows, { { name = "a", unit = "V", fmt = "%.2g" },
          { name = "b", unit = "%" }, { name = "c", unit = "W", si = false },
          { name = "d", unit = "A" } }))
        assert.is_truthy(l[1]:match("^a %(V%) +b %(%%%) +c %(W%) +d %(mA%)$"), l[1])
        assert.is_truthy(l[3]:match("^1e%-06 +0%.000001 +0%.000001 +1$"), l[3])
      end)

      it("rejects an unknown units mode and a bad span", function()
        assert.has_error(function() report.table({ { g = 1 } }, { "g" }, { units = "each" }) end,
          "segwise.report.table: units must be 'auto', 'header' or 'cells' (got each)")
        assert.has_error(function() report.table({ { g = 1 } }, { "g" }, { span = -1 }) end,
          "segwise.report.table: span must be a number of decades >= 0 (got -1)")
      end)
    end)
  end)

  describe("json", function()
    it("encodes arrays, objects with sorted keys, escapes, NaN as null", function()
      assert.are.equal('{"a":1,"b":[1,2.5,null],"c":"x\\"\\n\\u0001","d":[],"e":{"x":true}}\n',
        report.json { a = 1, b = { 1, 2.5, 0 / 0 }, c = 'x"\n\1', d = {}, e = { x = true } })
    end)

    it("keeps 17 digits on request", function()
      assert.are.equal(1 / 3, tonumber(report.json({ 1 / 3 }, { full = true }):match("%[(.-)%]")))
    end)

    it("names what it cannot encode", function()
      assert.has_error(function() report.json { f = print } end,
        "segwise.report.json: value.f is a function, which JSON cannot hold")
      local t = {}
      t.self = t
      assert.has_error(function() report.json(t) end,
        "segwise.report.json: value.self refers back to itself")
    end)

    it("writes to a path", function()
      local path = tmpname()
      local s = report.json({ 1, 2 }, { out = path })
      assert.are.equal("[1,2]\n", read_all(path))
      assert.are.equal(s, read_all(path))
      os.remove(path)
    end)
  end)

  -- A model double with the methods the reports use, so these specs do not
  -- depend on the C module.  Segments are {lo, hi, slope, intercept}.
  local function fake_model(segs, info, cmp)
    local m = {}
    function m:nseg() return #segs end
    function m:seg(k)
      local s = segs[k]; return { lo = s[1], hi = s[2], slope = s[3], intercept = s[4] }
    end
    function m:knots()
      local xs, ys = {}, {}
      for k = 1, #segs do xs[k] = segs[k][1]; ys[k] = segs[k][4] + segs[k][3] * segs[k][1] end
      xs[#segs + 1] = segs[#segs][2]
      return xs, ys
    end
    function m:thevenin(k) return segs[k][4], segs[k][3] end
    function m:norton(k)
      local s = segs[k]
      if s[3] == 0 then error("segwise.norton: segment " .. k .. " is flat") end
      return -s[4] / s[3], 1 / s[3]
    end
    function m:fit_info() return info end
    function m:compare() return cmp end
    return m
  end

  local segs = { { 0, 0.001, 0, 0.6 }, { 0.001, 0.01, 10, 0.59 }, { 0.01, 0.05, 2.5, 0.665 } }
  local info = { criterion = "minimax", error = "abs", segments = 3, max_abs = 0.0042,
    x_abs = 0.0007, max_rel = 0.0071, x_rel = 0.0007, rms = 0.002,
    per_segment = { { max_abs = 0.0042, x = 0.0007, max_rel = 0.0071 },
      { max_abs = 0.003, x = 0.005, max_rel = 0.004 },
      { max_abs = 0.001, x = 0.03, max_rel = 0.0012 } } }

  describe("fit_table", function()
    it("lists each segment with Thevenin and Norton forms and units", function()
      local s = report.fit_table(fake_model(segs, info), { x = "A", y = "V" })
      assert.is_truthy(s:find("3 segments", 1, true))
      assert.is_truthy(s:find("knots: 0 A, 1 mA, 10 mA, 50 mA", 1, true))
      assert.is_truthy(s:find("minimax", 1, true))
      assert.is_truthy(s:find("max abs 4.2 mV at 700 " .. MU .. "A", 1, true))
      assert.is_truthy(s:find("max rel 0.71 %", 1, true))
      for _, h in ipairs { "from (mA)", "slope (" .. OHM .. ")", "e (mV)", "r (" .. OHM .. ")",
        "j (mA)", "g (mS)", "max err (mV)", "max rel (%)" } do
        assert.is_truthy(s:find(h, 1, true), h)
      end
      -- segment 1 is flat: no Norton form, a dash instead
      local row1 = s:match("\n( +1 [^\n]*)")
      assert.is_truthy(row1 and row1:find(DASH, 1, true), row1)
      -- segment 2: j = -0.59/10 = -59 mA, g = 1/10 S = 100 mS
      local row2 = s:match("\n( +2 [^\n]*)")
      assert.is_truthy(row2:find("-59", 1, true), row2)
      assert.is_truthy(row2:find(" 100 ", 1, true), row2)
    end)

    it("csv keeps raw numbers; the flat segment's Norton cells are empty", function()
      local t = parse_csv(report.fit_table(fake_model(segs, info),
        { x = "A", y = "V", format = "csv" }))
      assert.are.equal(4, #t)
      assert.are.equal("j (A)", t[1][8])
      assert.are.equal("", t[2][8])
      assert.is.near(-0.059, tonumber(t[3][8]), 1e-12)  -- -0.59/10, printed %.6g
      assert.is.near(0.0071, tonumber(t[2][12]), 1e-12)
    end)

    it("works without fit_info (a model built from points)", function()
      local s = report.fit_table(fake_model(segs, nil), { x = "V", y = "A" })
      assert.is_truthy(s:find("slope (S)", 1, true))
      assert.is_falsy(s:find("max err", 1, true))
    end)

    it("markdown has a bullet summary and a pipe table", function()
      local s = report.fit_table(fake_model(segs, info), { x = "A", y = "V", format = "markdown" })
      assert.is_truthy(s:find("- PWL model: 3 segments", 1, true))
      assert.is_truthy(s:find("\n| seg", 1, true))
    end)

    it("rejects something that is not a model", function()
      assert.has_error(function() report.fit_table({}) end,
        "segwise.report.fit_table: model has no method 'nseg'")
    end)

    it("with a real segwise model, when the C module is built", function()
      local ok, sw = pcall(require, "segwise")
      if not ok or type(sw) ~= "table" or not sw.pwl then
        pending("segwise C module not available in this build")
        return
      end
      -- y = |x| sampled at -1, 0, 2: slopes -1 and 1 (by hand)
      local m = sw.pwl { x = { -1, 0, 2 }, y = { 1, 0, 2 } }
      local s = report.fit_table(m, { x = "A", y = "V", format = "csv" })
      local t = parse_csv(s)
      assert.are.equal(3, #t)
      assert.is.near(-1, tonumber(t[2][4]), 1e-12)
      assert.is.near(1, tonumber(t[3][4]), 1e-12)
    end)
  end)

  -- Near-zero relative errors (rule in segwise.report, above fit_table): a
  -- max rel cell prints as a dash when undefined, or, with no floor in force
  -- on a fit not made on relative error, when max_abs / max_rel (a bound on
  -- the denominator |y| at the maximum) is below rel_zero (1e-6) times the
  -- model's largest |y|.
  describe("fit_table, relative errors near a zero of the curve", function()
    -- one segment y = x on [0, 1]: largest |y| is 1
    local line = { { 0, 1, 1, 0 } }
    local function last_cell(s)
      local row = s:match("\n( +1 [^\n]*)")
      return row and row:match("(%S+)$")
    end
    local cases = {
      -- name, max_abs, max_rel, fit error, fit rel_floor, rel_zero, expected cell (%)
      { "an ordinary figure", 1e-3, 0.01, "abs", nil, nil, "1" },
      { "undefined (NaN)", 1e-3, 0 / 0, "abs", nil, nil, DASH },
      { "absent", 1e-3, nil, "abs", nil, nil, DASH },
      { "denominator at most 1e-7 of full scale", 1e-3, 1e4, "abs", nil, nil, DASH },
      { "denominator at most 1.1e-6 of full scale", 1e-3, 900, "abs", nil, nil, "90000" },
      { "rel_zero = 1e-9 moves the threshold", 1e-3, 1e4, "abs", nil, 1e-9, "1000000" },
      { "the fit's own floor is kept", 1e-9, 1e3, "abs", 1e-12, nil, "100000" },
      { "a fit made on relative error is kept", 1e-9, 1e3, "rel", nil, nil, "100000" },
      { "zero error", 0, 0, "abs", nil, nil, "0" },
    }
    for _, c in ipairs(cases) do
      it(c[1], function()
        local inf = { criterion = "minimax", error = c[4], rel_floor = c[5], max_abs = c[2],
          x_abs = 0.5, max_rel = c[3], x_rel = 0.5,
          per_segment = { { max_abs = c[2], x = 0.5, max_rel = c[3] } } }
        local s = report.fit_table(fake_model(line, inf), { x = "V", y = "A", rel_zero = c[6] })
        assert.are.equal(c[7], last_cell(s), s)
        local dashed = c[7] == DASH
        -- the summary line
        assert.are.equal(dashed, s:find("max rel " .. DASH .. "[,\n]") ~= nil)
        -- the footnote
        assert.are.equal(dashed, s:find("the curve is near 0 there", 1, true) ~= nil)
        -- CSV keeps the raw fraction
        local t = parse_csv(report.fit_table(fake_model(line, inf),
          { x = "V", y = "A", format = "csv" }))
        if c[3] == nil then assert.are.equal("", t[2][12])
        elseif c[3] ~= c[3] then assert.are.equal("NaN", t[2][12])
        else assert.is.near(c[3], tonumber(t[2][12]), 1e-6 * c[3]) end   -- %.6g printed
      end)
    end

    it("rejects a bad rel_floor or rel_zero, and a new floor without the curve", function()
      local m = fake_model(segs, info)
      assert.has_error(function() report.fit_table(m, { rel_floor = -1 }) end,
        "segwise.report.fit_table: rel_floor must be a positive finite number (got -1)")
      assert.has_error(function() report.fit_table(m, { rel_floor = 0 / 0 }) end,
        "segwise.report.fit_table: rel_floor must be a positive finite number (got "
          .. tostring(0 / 0) .. ")")
      assert.has_error(function() report.fit_table(m, { rel_zero = "x" }) end,
        "segwise.report.fit_table: rel_zero must be a non-negative finite number (got x)")
      assert.has_error(function() report.fit_table(m, { rel_floor = 1e-3 }) end,
        "segwise.report.fit_table: rel_floor needs curve = the curve the model approximates " ..
        "(the relative errors are recomputed against it)")
    end)

    -- Closed forms, worked by hand: the chord y = x of the curve y = x^3 on
    -- [-1, 1] (knot at 0).  Absolute error x - x^3 peaks at x = 1/sqrt(3):
    -- 2/(3 sqrt 3).  With floor F the relative error is (x - x^3)/F below
    -- |x| = F^(1/3) (increasing there) and 1/x^2 - 1 above it (decreasing),
    -- so its maximum is F^(-2/3) - 1 at |x| = F^(1/3).  Without a floor the
    -- curve is 0 at x = 0: undefined.
    it("rel_floor with the curve: per segment errors recomputed (real segwise)", function()
      local ok, sw = pcall(require, "segwise")
      if not ok or type(sw) ~= "table" or not sw.pwl or not sw.curve then
        pending("segwise C module not available in this build")
        return
      end
      local cube = sw.curve.fn(function(x) return x ^ 3 end, { lo = -1, hi = 1 })
      local m = sw.pwl { x = { -1, 0, 1 }, y = { -1, 0, 1 } }
      local F = 0.1
      local t = parse_csv(report.fit_table(m,
        { x = "V", y = "A", curve = cube, rel_floor = F, format = "csv" }))
      assert.are.equal(3, #t)
      for r = 2, 3 do
        assert.is.near(2 / (3 * math.sqrt(3)), tonumber(t[r][10]), 1e-5)   -- %.6g printed
        assert.is.near(F ^ (-2 / 3) - 1, tonumber(t[r][12]), 1e-5)
      end
      local s = report.fit_table(m, { x = "V", y = "A", curve = cube, rel_floor = F })
      assert.is_truthy(s:find("max rel 364 % at -464 mV", 1, true), s)   -- 3.6416, F^(1/3) = 0.4642
      assert.is_truthy(s:find("rel floor 100 mA", 1, true), s)
      s = report.fit_table(m, { x = "V", y = "A", curve = cube })
      assert.are.equal(DASH, last_cell(s), s)
      -- compare_fits: the same figure through its floor option, a dash without
      local c = report.compare_fits({ { name = "chord", model = m } }, cube,
        { x = "V", y = "A", range = { rel_floor = F } })
      assert.is_truthy(c:match("\nchord +2 +385 +%-577 +364 +%-464 +276"), c)
      c = report.compare_fits({ { name = "chord", model = m } }, cube,
        { x = "V", y = "A", rel_floor = F })
      assert.is_truthy(c:match("\nchord +2 +385 +%-577 +364 +%-464 +276"), c)
      c = report.compare_fits({ { name = "chord", model = m } }, cube, { x = "V", y = "A" })
      assert.is_truthy(c:match("\nchord +2 +385 +%-577 +" .. DASH .. " +" .. DASH .. " +276"), c)
    end)

    -- A curve that nearly reaches 0: y = x^3 + 1e-8 on [0, 1] against the
    -- line y = x + 0.01.  At x = 0 the relative error is 0.01 / 1e-8 = 1e6
    -- (by hand): finite, but it measures the curve's closeness to 0.
    it("a finite but near-zero figure prints as a dash unless a floor is given "
      .. "(real segwise)", function()
      local ok, sw = pcall(require, "segwise")
      if not ok or type(sw) ~= "table" or not sw.pwl or not sw.curve then
        pending("segwise C module not available in this build")
        return
      end
      local lift = sw.curve.fn(function(x) return x ^ 3 + 1e-8 end, { lo = 0, hi = 1 })
      local m = sw.pwl { x = { 0, 1 }, y = { 0.01, 1.01 } }
      local raw = m:compare(lift).max_rel
      assert.is_true(raw >= 1e6 * (1 - 1e-9))     -- at least the value at x = 0
      assert.are.equal(DASH, last_cell(report.fit_table(m, { x = "V", y = "A", curve = lift })))
      local s = report.fit_table(m, { x = "V", y = "A", curve = lift, rel_floor = 0.01 })
      -- with a 10 mA floor: at x = 0 the error is 10 mA, ratio 1; the
      -- (x + 0.01 - x^3 - 1e-8)/0.01 branch peaks where 1 - 3x^2 = 0 only
      -- above the floor crossing, so the figure is finite and printed
      assert.are_not.equal(DASH, last_cell(s), s)
      assert.is_true(tonumber(last_cell(s)) >= 100, s)
      assert.is_truthy(report.compare_fits({ { name = "line", model = m } }, lift,
        { x = "V", y = "A" }):match("\nline +1 +%d+ +%d+ +" .. DASH))
    end)
  end)

  describe("op_table", function()
    local op = { v = { ["1"] = 5, ["2"] = 0.66, out = 3.3, ["10"] = 1 },
      i = { DIODE = 0.00431, RSER = 0.00431 }, p = { DIODE = 0.0028, RSER = 0.0186 },
      state = { DIODE = 2 }, warnings = { "DIODE above 80 % of rated power" } }

    it("lists node voltages in order, elements, warnings", function()
      local s = report.op_table(op)
      local l = lines_of(s)
      local order = {}
      for _, line in ipairs(l) do
        local node = line:match("^(%S+) +[%d.]+$")
        if node then order[#order + 1] = node end
      end
      assert.are.same({ "1", "2", "10", "out" }, order)
      assert.is_truthy(s:find("i (mA)", 1, true))
      assert.is_truthy(s:find("p (mW)", 1, true))
      assert.is_truthy(s:find("18.6", 1, true))
      assert.is_truthy(s:find("warning: DIODE above 80 % of rated power", 1, true))
      local r1 = s:match("\n(RSER[^\n]*)")
      assert.is_truthy(r1:find(DASH, 1, true), r1)      -- no state for a resistor
    end)

    it("csv holds nodes and elements in one file", function()
      local t = parse_csv(report.op_table(op, { format = "csv" }))
      assert.are.same({ "kind", "name", "v (V)", "i (A)", "p (W)", "state" }, t[1])
      assert.are.same({ "node", "1", "5", "", "", "" }, t[2])
      assert.are.equal(7, #t)
    end)

    it("leaves out the reference node, shows element voltage, knots and method", function()
      local s = report.op_table { v = { ["0"] = 0, gnd = 0, a = 2 }, vd = { DIODE = 0.7 },
        i = { DIODE = 0.002 }, on_breakpoint = { DIODE = true }, state = { DIODE = 1 },
        method = "assumed", iterations = 2 }
      assert.is_falsy(s:find("\ngnd", 1, true))
      assert.is_falsy(s:find("\n0 ", 1, true))
      assert.is_truthy(s:find("v (mV)", 1, true))
      assert.is_truthy(s:find("on knot", 1, true))
      assert.is_truthy(s:find("method: assumed, iterations: 2", 1, true))
      assert.is_truthy(report.op_table({ v = { gnd = 0 } }, { ground = true }):find("gnd", 1, true))
    end)

    it("reports a real operating point when segwise is built", function()
      local ok, sw = pcall(require, "segwise")
      if not ok or type(sw) ~= "table" or not sw.network then
        pending("segwise C module or networks not available in this build")
        return
      end
      -- 10 V across 1 kOhm + 1 kOhm: 5 V at the middle, 5 mA, 25 mW each (by hand)
      local net = sw.network()
      net:vsource("VB", "a", "0", 10)
      net:resistor("RSER", "a", "b", 1000)
      net:resistor("RLOAD", "b", "0", 1000)
      local t = parse_csv(report.op_table(net:solve {}, { format = "csv" }))
      local byname = {}
      for k = 2, #t do byname[t[k][1] .. ":" .. t[k][2]] = t[k] end
      assert.is.near(5, tonumber(byname["node:b"][3]), 1e-9)
      assert.is.near(0.005, math.abs(tonumber(byname["element:RSER"][4])), 1e-12)
      assert.is.near(0.025, math.abs(tonumber(byname["element:RLOAD"][5])), 1e-12)
    end)

    it("rejects a non-table", function()
      assert.has_error(function() report.op_table(5) end,
        "segwise.report.op_table: op must be an operating point (got number)")
    end)
  end)

  describe("compare_fits", function()
    local a = fake_model(segs, info,
      { max_abs = 0.0123, x_abs = 0.004, max_rel = 0.021, x_rel = 1e-4, rms = 0.004 })
    local b = fake_model({ segs[1] }, info,
      { max_abs = 0.002, x_abs = 0.03, max_rel = 0.5, x_rel = 2e-4, rms = 0.001 })

    it("puts several fits side by side", function()
      local s = report.compare_fits(
        { { name = "uniform", model = a }, { name = "optimal", model = b } }, {},
        { x = "A", y = "V" })
      assert.is_truthy(s:find("max abs (mV)", 1, true))
      assert.is_truthy(s:find("max rel (%)", 1, true))
      local u = s:match("\n(uniform[^\n]*)")
      assert.is_truthy(u:match("^uniform +3 +12.3 +4 +2.1 "), u)
      local o = s:match("\n(optimal[^\n]*)")
      assert.is_truthy(o:match("^optimal +1 +2 +30 +50 "), o)
    end)

    it("sorts by a column on request", function()
      local s = report.compare_fits(
        { { name = "uniform", model = a }, { name = "optimal", model = b } }, {},
        { x = "A", y = "V", sort = "max_abs" })
      assert.is_true(s:find("optimal", 1, true) < s:find("uniform", 1, true))
    end)

    it("names the fit at fault", function()
      assert.has_error(function() report.compare_fits({ { name = "x", model = {} } }, {}) end,
        "segwise.report.compare_fits: fits[1] ('x') has no method 'compare'")
      assert.has_error(function() report.compare_fits({}, {}) end,
        "segwise.report.compare_fits: fits must be a non-empty list of {name=, model=}")
    end)
  end)
end)
