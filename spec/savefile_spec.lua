-- Files written safely (csrc/core/text/textfile.c, through m:save, report.table{out =}
-- and plot.svg): a unique temporary beside the real target renamed into place; symlinks
-- followed, modes kept, FIFOs and devices written directly, unwritable targets refused,
-- no other name touched, and a failed write leaves the old file and no temporary.
local sw = require "segwise"
local files = require "helpers.files"
local subproc = require "helpers.subproc"

local slurp, raises, lines_of = files.read_all, files.raises, files.lines_of

local function q(s) return "'" .. s:gsub("'", "'\\''") .. "'" end
local function sh(cmd) return os.execute(cmd) == true end
local function mode_of(path) return lines_of("stat -c %a " .. q(path))[1] end
local function names_in(dir)
  local t = lines_of("ls -A " .. q(dir))
  table.sort(t)
  return table.concat(t, " ")
end

local model = sw.pwl { x = { 0, 0.25, 1 }, y = { 0, 0.5, 3 } }
local rows = { { v = 1.5, i = 0.25 }, { v = 2, i = 0.5 } }
local plot_spec = { series = { { x = { 0, 1 }, y = { 0, 1 }, label = "line" } } }

-- Each writer, with the text it writes and the public name its errors carry.
local writers = {
  { name = "model:save", write = function(path) model:save(path) end,
    check = function(text) return text:find("# segwise", 1, true) ~= nil end },
  { name = "report.table",
    write = function(path) sw.report.table(rows, { "v", "i" }, { format = "csv", out = path }) end,
    check = function(text) return text:find("v,i\n1.5,0.25\n", 1, true) == 1 end },
  { name = "plot.svg", write = function(path) sw.plot.svg(path, plot_spec) end,
    check = function(text) return text:find("<svg", 1, true) ~= nil end },
}

for _, w in ipairs(writers) do
  describe("segwise." .. w.name .. " writes files safely:", function()
    local dir
    before_each(function() dir = files.tmpdir() end)
    after_each(function() os.execute("rm -rf " .. q(dir)) end)

    it("a symlink stays a symlink and its target gets the new text", function()
      local target, link = dir .. "/real.out", dir .. "/link.out"
      local f = assert(io.open(target, "wb")); f:write("old text\n"); f:close()
      assert.is_true(sh("ln -s real.out " .. q(link)))
      w.write(link)
      assert.is_true(sh("test -L " .. q(link)))
      assert.is_true(w.check(slurp(target)))
      assert.are.equal("link.out real.out", names_in(dir)) -- no temporary left behind
    end)

    it("a dangling symlink gets its target created", function()
      local link = dir .. "/link.out"
      assert.is_true(sh("mkdir " .. q(dir .. "/sub") .. " && ln -s sub/new.out " .. q(link)))
      w.write(link)
      assert.is_true(sh("test -L " .. q(link)))
      assert.is_true(w.check(slurp(dir .. "/sub/new.out")))
    end)

    it("an unrelated <path>.tmp is left as it was", function()
      local path = dir .. "/x.out"
      local f = assert(io.open(path .. ".tmp", "wb")); f:write("someone else's\n"); f:close()
      w.write(path)
      assert.are.equal("someone else's\n", slurp(path .. ".tmp"))
      assert.is_true(w.check(slurp(path)))
      assert.are.equal("x.out x.out.tmp", names_in(dir))
    end)

    it("an existing file keeps its mode; a new one gets the mode any new file gets", function()
      local path = dir .. "/kept.out"
      local f = assert(io.open(path, "wb")); f:write("old\n"); f:close()
      assert.is_true(sh("chmod 640 " .. q(path)))
      w.write(path)
      assert.are.equal("640", mode_of(path))
      local plain = dir .. "/plain.out"
      f = assert(io.open(plain, "wb")); f:close() -- the umask decides, as for io.open
      w.write(dir .. "/fresh.out")
      assert.are.equal(mode_of(plain), mode_of(dir .. "/fresh.out"))
    end)

    it("a FIFO is written directly and stays a FIFO", function()
      local fifo, got = dir .. "/pipe", dir .. "/got"
      assert.is_true(sh("mkfifo " .. q(fifo)))
      assert.is_true(sh("(timeout 20 cat " .. q(fifo) .. " > " .. q(got) .. ") &"))
      w.write(fifo)
      assert.is_true(sh("test -p " .. q(fifo)))
      for _ = 1, 200 do -- the reader finishes after the writer closes
        if w.check(slurp(got)) then break end
        os.execute("sleep 0.05")
      end
      assert.is_true(w.check(slurp(got)))
    end)

    it("a directory is refused, naming the function and the path", function()
      local path = dir .. "/adir"
      assert.is_true(sh("mkdir -p " .. q(path .. "/inside")))
      raises("segwise." .. w.name .. ': cannot write "' .. path .. '": it is a directory',
        w.write, path)
      assert.are.equal("inside", names_in(path))
    end)

    it("a missing directory is an error naming the function and the path", function()
      local path = dir .. "/none/x.out"
      raises("segwise." .. w.name .. ': cannot write "' .. path .. '": No such file', w.write,
        path)
    end)
  end)
end

describe("safe file writing, beyond the three writers' common cases:", function()
  local dir
  before_each(function() dir = files.tmpdir() end)
  after_each(function() os.execute("rm -rf " .. q(dir)) end)

  it("a write that fails half way (file size limit) keeps the old file and leaves no temporary",
    function()
      local path = dir .. "/big.csv"
      local f = assert(io.open(path, "wb")); f:write("old\n"); f:close()
      -- 2000 knots make a file of about 150 kB; the limit is 2 blocks of 512 bytes
      local ok, out = subproc.lua(([[
        local sw = require "segwise"
        local x, y = {}, {}
        for i = 1, 2000 do x[i] = i / 3; y[i] = math.sin(i) end
        local ok, err = pcall(function() sw.pwl { x = x, y = y }:save(%q) end)
        print(ok, err)
        ok, err = pcall(sw.report.write, %q, string.rep("new text\n", 20000))
        print(ok, err)
      ]]):format(path, path), { fsize = 2 })
      assert.is_true(ok, out)
      assert.matches('false\tsegwise.model:save: cannot write "' .. path:gsub("%p", "%%%0")
        .. '": File too large %(the old file is untouched%)', out)
      assert.matches("false\t[^\n]*segwise.report: cannot write [^\n]*File too large", out)
      assert.are.equal("old\n", slurp(path))
      assert.are.equal("big.csv", names_in(dir))
    end)

  it("a read-only file is refused as the system refuses it (root may write it, mode kept)",
    function()
      local path = dir .. "/ro.csv"
      local f = assert(io.open(path, "wb")); f:write("old\n"); f:close()
      assert.is_true(sh("chmod 444 " .. q(path) .. " && chmod 777 " .. q(dir)))
      if files.lines_of("id -u")[1] == "0" then
        model:save(path) -- root writes read-only files, as the shell's > would
        assert.are.equal("444", mode_of(path))
        f = assert(io.open(path, "wb")); f:write("old\n"); f:close()
      end
      if subproc.root_can_drop() then
        local ok, out = subproc.lua(([[
          local sw = require "segwise"
          print(pcall(function() sw.pwl { x = { 0, 1 }, y = { 0, 1 } }:save(%q) end))
        ]]):format(path), { nobody = true })
        assert.is_true(ok, out)
        assert.is_truthy(out:find('false\tsegwise.model:save: cannot write "' .. path
          .. '": Permission denied', 1, true), out)
      elseif files.lines_of("id -u")[1] ~= "0" then
        raises('segwise.model:save: cannot write "' .. path .. '": Permission denied',
          model.save, model, path)
      end
      assert.are.equal("old\n", slurp(path))
      assert.are.equal("444", mode_of(path))
      assert.are.equal("ro.csv", names_in(dir))
    end)

  it("/dev/stdout is written through, never replaced", function()
    local ok, out = subproc.lua([[
      local sw = require "segwise"
      sw.report.table({ { a = 1 } }, { "a" }, { format = "csv", out = "/dev/stdout" })
    ]])
    assert.is_true(ok, out)
    assert.are.equal("a\n1\n", out)
    assert.is_true(sh("test -L /dev/stdout"))
  end)

  it("a device node is written directly and stays a device (root only: mknod)", function()
    if lines_of("id -u")[1] ~= "0" then
      pending("mknod needs root")
      return
    end
    local node = dir .. "/null"
    assert.is_true(sh("mknod " .. q(node) .. " c 1 3")) -- the null device's numbers on Linux
    model:save(node)
    sw.plot.svg(node, plot_spec)
    assert.is_true(sh("test -c " .. q(node)))
    assert.are.equal("null", names_in(dir))
  end)

  it("refuses a path with a NUL byte and a path that is no string, naming the function",
    function()
      raises("segwise.model:save: path contains a NUL byte", model.save, model, dir .. "/a\0b")
      raises("segwise.model:save: path must be a string (got nil)", model.save, model, nil)
      raises("segwise.report: path contains a NUL byte", sw.report.write, dir .. "/a\0b", "x")
      raises("segwise.pwl.load: path must be a string (got number", sw.pwl.load, 5)
    end)
end)
