-- Checks the README's Neovim set-up as a user gets it: the README's init.lua opens a .loss file, then
-- this script (run after it with -c) reports what happened. Prints "FILETYPE ft", "CLIENTS n",
-- "DIAGS n", "LENS command | title" per code lens, and "NOTIFY message" for what running the first lens
-- showed. Exit codes: 0 ok, 2 no client attached, 3 no diagnostics, 4 no code lens, 5 the lens showed nothing.
local out = function(s) io.stdout:write(s .. "\n") end
local buf = vim.api.nvim_get_current_buf()
out("FILETYPE " .. vim.bo[buf].filetype)
local attached = vim.wait(20000, function() return #vim.lsp.buf_get_clients(buf) > 0 end, 50)
out("CLIENTS " .. #vim.lsp.buf_get_clients(buf))
if not attached then vim.cmd("cquit 2") end
if not vim.wait(30000, function() return #vim.diagnostic.get(buf) > 0 end, 50) then vim.cmd("cquit 3") end
out("DIAGS " .. #vim.diagnostic.get(buf))

-- Record what the server shows (window/showMessage); the default handler still prints it as 0.7 does.
local notes = {}
local show = vim.lsp.handlers["window/showMessage"]
vim.lsp.handlers["window/showMessage"] = function(err, result, ctx, config)
  table.insert(notes, result.message)
  return show(err, result, ctx, config)
end
-- The lenses as the editor shows them (refresh until the engine's summaries replace "analysing…").
local function ready()
  local l = vim.lsp.codelens.get(buf)
  return #l > 0 and not l[1].command.title:match("analysing")
end
local deadline = vim.loop.now() + 30000
repeat
  vim.lsp.codelens.refresh()
  vim.wait(1000, ready, 50)
until ready() or vim.loop.now() > deadline
local lenses = vim.lsp.codelens.get(buf)
if #lenses == 0 then vim.cmd("cquit 4") end
table.sort(lenses, function(a, b) return a.range.start.line < b.range.start.line end)
for _, l in ipairs(lenses) do out("LENS " .. l.command.command .. " | " .. l.command.title) end
-- Run the first lens the way a user does: cursor on its line, :lua vim.lsp.codelens.run()
vim.api.nvim_win_set_cursor(0, { lenses[1].range.start.line + 1, 0 })
vim.lsp.codelens.run()
if not vim.wait(10000, function() return #notes > 0 end, 50) then vim.cmd("cquit 5") end
for _, n in ipairs(notes) do out("NOTIFY " .. tostring(n):gsub("\n", " | ")) end
vim.cmd("qall!")
