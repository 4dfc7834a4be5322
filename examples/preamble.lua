-- The shared start of every example.  From the repository's root it finds
-- segwise installed or in this tree (lua/ and build/), and reads the
-- example's own arguments, [--quiet] [outdir]: "--quiet" silences its
-- printing, outdir names the folder its files go to (created; the default
-- is `default`, or out/examples).
--   local sw, say, outdir = dofile("examples/preamble.lua") { ... }
--   local sw, say, outdir = dofile("examples/preamble.lua") { default = "out/demo", ... }
return function(args)
  if not pcall(require, "segwise") then
    package.path = "./lua/?.lua;./lua/?/init.lua;" .. package.path
    package.cpath = "./build/?.so;" .. package.cpath
  end
  local quiet = args[1] == "--quiet"
  local outdir = (quiet and args[2] or not quiet and args[1]) or args.default or "out/examples"
  os.execute(("mkdir -p %q"):format(outdir))
  local say = quiet and function() end or print
  return require "segwise", say, outdir
end
