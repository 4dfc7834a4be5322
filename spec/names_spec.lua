-- Names of our own: the examples, docs and README must not bring back
-- element names made of one letter and a number (V1, R1, D1, E1...), the
-- three-letter mega suffix (M is mega, m is milli) or "0" written as the
-- reference node in a network call (examples and docs write "gnd").
-- Runs without the C module: it only reads files.

-- Tokens that look like letter + number but are not element names.
local ALLOWED = {
  E3 = "IEC 60063 series", E6 = "IEC 60063 series", E12 = "IEC 60063 series",
  E24 = "IEC 60063 series", E48 = "IEC 60063 series", E96 = "IEC 60063 series",
  E192 = "IEC 60063 series",
  R47 = "IEC 60062 part marking (0.47 ohm), shown as a parse_si input",
  C99 = "the C language standard", C11 = "the C language standard",
}

local NET_CALLS = { resistor = true, vsource = true, isource = true, vcvs = true, vccs = true,
  ccvs = true, cccs = true, element = true }

-- One finding: where and what.
local function hit(list, lineno, what) list[#list + 1] = ("line %d: %s"):format(lineno, what) end

-- Uppercase letter + digits as a whole word, or any letter + digits quoted.
local function element_names(line, lineno, out)
  for tok in line:gmatch("%f[%w_]([A-Z]%d+)%f[^%w_]") do
    if not ALLOWED[tok] then hit(out, lineno, "element name " .. tok) end
  end
  for tok in line:gmatch("[\"']([a-z]%d+)[\"']") do hit(out, lineno, "element name " .. tok) end
end

-- A number followed by the three-letter mega suffix, in any case; a line
-- that shows the refusal ("write M for mega") documents it and passes.
local function mega_suffix(line, lineno, out)
  if line:find("write M for mega", 1, true) then return end
  local s = line:match("%d%s*[Mm][Ee][Gg]")
  if s then hit(out, lineno, "mega suffix in '" .. s .. "' (write M)") end
end

-- A network call with "0" as a node: examples and docs write "gnd".
local function ground_zero(line, lineno, out)
  for method, args in line:gmatch(":(%a+)%s*(%b())") do
    if NET_CALLS[method] and args:find("[\"']0[\"']") then
      hit(out, lineno, ("net:%s with node \"0\" (write \"gnd\")"):format(method))
    end
  end
end

-- Every finding in a text, one string per finding.
local function findings(text)
  local out, lineno = {}, 0
  for line in (text .. "\n"):gmatch("(.-)\r?\n") do
    lineno = lineno + 1
    element_names(line, lineno, out)
    mega_suffix(line, lineno, out)
    ground_zero(line, lineno, out)
  end
  return out
end

-- Only an SVG's visible text counts (path data is full of "M10").
local function svg_text(s)
  local t = {}
  for line in (s .. "\n"):gmatch("(.-)\n") do
    local parts = {}
    for inner in line:gmatch("<text[^>]*>(.-)</text>") do parts[#parts + 1] = inner end
    t[#t + 1] = table.concat(parts, " ")
  end
  return table.concat(t, "\n")
end

local function read(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  if path:match("%.svg$") then return svg_text(s) end
  return s
end

-- The files a user reads: examples (scripts, notes, data), docs, README.
local function user_files()
  local list = { "README.md" }
  local pipe = assert(io.popen("find examples docs -type f | sort"))
  for p in pipe:lines() do
    if p:match("%.lua$") or p:match("%.md$") or p:match("%.csv$") or p:match("%.txt$")
       or p:match("%.svg$") or p:match("%.dat$") then
      list[#list + 1] = p
    end
  end
  pipe:close()
  return list
end

describe("names of our own", function()
  describe("the matcher", function()
    local bad = {
      { 'net:vsource("V1", "in", "gnd", 5)', "V1" },
      { "local op = net:solve{start = {D1 = 2}}", "D1" },
      { "print(op.i.R12)", "R12" },
      { 'net:element("d3", "a", "gnd", m)', "d3" },
      { "The controlled sources E1, F1, G1 and H1", "H1" },
      { 'sw.parse_si("4.7meg")', "mega suffix" },
      { "a 1 MEG resistor", "mega suffix" },
      { 'net:resistor("RLOAD", "out", "0", 100)', "node \"0\"" },
      { "net:isource('ISRC', '0', 'x', 1e-3)", "node \"0\"" },
    }
    for _, c in ipairs(bad) do
      it("flags " .. c[1], function()
        local f = findings(c[1])
        assert.is_true(#f >= 1, "no finding")
        assert.is_truthy(table.concat(f, "; "):find(c[2], 1, true), table.concat(f, "; "))
      end)
    end

    local good = {
      'net:vsource("VIN", "in", "gnd", 5)', 'net:element("LED3", "a", "b", m)',
      "E24 values", 'sw.parse_si("4k7"), sw.parse_si("2R2"), sw.parse_si("1M5")',
      'sw.parse_si("4.7M")', 'fill="#0072B2"', "U+2800", "x1 = 2; y0 = 3",
      'net:isource("IPH", "gnd", "pv", 0)', "megabytes of data", "the omega sign",
      'net:set("VIN", 0)',
      '`segwise.parse_si: cannot read "4.7MEG": ...; write M for mega`',
    }
    for _, g in ipairs(good) do
      it("passes " .. g, function()
        assert.are.same({}, findings(g))
      end)
    end

    it("reads only the visible text of an SVG", function()
      local s = '<path d="M10 20 L30 40"/>\n<text x="1">D1 current</text>'
      assert.are.same({ "line 2: element name D1" }, findings(svg_text(s)))
    end)
  end)

  describe("the user's files", function()
    local files = user_files()

    it("include the README, the API reference and the examples", function()
      local seen = {}
      for _, p in ipairs(files) do seen[p] = true end
      assert.is_true(seen["README.md"] and seen["docs/API.md"] and seen["examples/tour.lua"])
    end)

    for _, path in ipairs(files) do
      it(path .. " uses names of our own", function()
        local f = findings(read(path))
        assert.are.same({}, f, path .. ": " .. table.concat(f, "; "))
      end)
    end
  end)
end)
