-- docs/API.md is checked against the code on every test run:
--  (a) every code block marked runnable (```lua run, or a block whose first
--      line is "-- run") runs without raising, with only `sw` defined;
--  (b) every public name reachable from the module (the sw table, the model,
--      curve, network, operating-point and array methods) appears in the
--      reference, so it cannot fall behind the code.
local sw = require "segwise"
local core = require "segwise.core"

local DOC = "docs/API.md"

local function read_doc() return require("helpers.files").read_all(DOC) end

-- Runnable blocks with the line each starts on.
local function runnable_blocks(text)
  local blocks, lineno, inside, info, buf, start = {}, 0, false, nil, nil, nil
  for line in (text .. "\n"):gmatch("(.-)\r?\n") do
    lineno = lineno + 1
    if not inside then
      local fence = line:match("^```(.*)$")
      if fence then inside, info, buf, start = true, fence, {}, lineno + 1 end
    elseif line:match("^```%s*$") then
      inside = false
      local lang, rest = info:match("^(%S*)%s*(.*)$")
      local marked = lang == "lua" and (rest:match("^run%f[%W]") ~= nil
        or (buf[1] or ""):match("^%-%-%s*run%s*$") ~= nil)
      if marked then blocks[#blocks + 1] = { code = table.concat(buf, "\n"), line = start } end
    else
      buf[#buf + 1] = line
    end
  end
  assert(not inside, DOC .. ": a code fence is never closed")
  return blocks
end

-- Public names, each with the spellings that count as a mention.
local function public_names()
  local names = {}
  local function add(label, ...) names[#names + 1] = { label = label, forms = { ... } } end

  -- The sw table: functions and sub-tables by their dotted path.  Data
  -- tables (PALETTE, PREFIX...) are named once; their entries are not API.
  local function walk(t, path, depth)
    local keys = {}
    for k in pairs(t) do if type(k) == "string" then keys[#keys + 1] = k end end
    table.sort(keys)
    for _, k in ipairs(keys) do
      local v, p = t[k], path .. "." .. k
      add(p, p)
      if type(v) == "table" and k ~= "core" and depth < 3 then
        local mt = getmetatable(v)
        local is_namespace = false
        for _, x in pairs(v) do if type(x) == "function" then is_namespace = true end end
        if is_namespace or (mt and mt.__call) then walk(v, p, depth + 1) end
      end
    end
  end
  walk(sw, "sw", 0)

  local function methods(tbl, obj, what)
    local keys = {}
    for k, v in pairs(tbl) do
      if type(k) == "string" and type(v) == "function" and not k:match("^__") then
        keys[#keys + 1] = k
      end
    end
    table.sort(keys)
    for _, k in ipairs(keys) do add(what .. ":" .. k, obj .. ":" .. k) end
  end
  methods(core.model_methods, "m", "model")
  methods(core.curve_methods, "c", "curve")

  local net = sw.network()
  net:vsource("V", "a", "0", 1):element("D", "a", "0", sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 3 } })
  methods(getmetatable(net), "net", "network")
  local op = net:solve()
  methods(getmetatable(op), "op", "operating point")
  net:free()

  local a = sw.array(1)
  methods(getmetatable(a).methods, "a", "array")
  a:free()
  return names
end

-- Names with no mention in text (a mention is the name not followed by
-- more of an identifier, so m:seg is not counted by m:segment).
local function missing_names(text, names)
  local out = {}
  for _, n in ipairs(names) do
    local found = false
    for _, form in ipairs(n.forms) do
      local from = 1
      while not found do
        local i, j = text:find(form, from, true)
        if not i then break end
        local next_char = text:sub(j + 1, j + 1)
        if not next_char:match("[%w_]") then found = true end
        from = j + 1
      end
    end
    if not found then out[#out + 1] = n.label end
  end
  return out
end

describe("docs/API.md", function()
  local text = read_doc()

  describe("runnable examples", function()
    local blocks = runnable_blocks(text)

    it("has runnable examples in every section", function()
      -- one per documented group at least; 30 is below the count written
      assert.is_true(#blocks >= 30, ("only %d runnable blocks"):format(#blocks))
    end)

    for _, b in ipairs(blocks) do
      it(("block at line %d runs"):format(b.line), function()
        local env = setmetatable({ sw = sw }, { __index = _G })
        local chunk, perr = load(b.code, ("=%s:%d"):format(DOC, b.line), "t", env)
        assert(chunk, perr)
        local ok, err = pcall(chunk)
        assert(ok, ("%s:%d: %s"):format(DOC, b.line, tostring(err)))
      end)
    end

    it("the extractor sees both markings and skips unmarked blocks", function()
      local sample = "```lua run\nx = 1\n```\n```lua\ny = 2\n```\n```lua\n-- run\nz = 3\n```\n"
      local got = runnable_blocks(sample)
      assert.are.equal(2, #got)
      assert.are.equal("x = 1", got[1].code)
      assert.are.equal(8, got[2].line) -- the fence is line 7
    end)
  end)

  describe("coverage of the public names", function()
    local names = public_names()

    it("finds the public names to check", function()
      -- a floor well below the real count: catches a walk that finds nothing
      assert.is_true(#names >= 80, ("only %d names found"):format(#names))
    end)

    it("mentions every public name", function()
      local missing = missing_names(text, names)
      assert.are.same({}, missing)
    end)

    it("notices a name that is missing", function()
      local probe = { { label = "sw.fit", forms = { "sw.fit" } },
                      { label = "m:seg", forms = { "m:seg" } } }
      assert.are.same({ "sw.fit", "m:seg" }, missing_names("sw.fitting and m:segment only", probe))
      assert.are.same({}, missing_names("sw.fit(c) and m:seg(k)", probe))
    end)
  end)
end)
