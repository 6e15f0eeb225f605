-- Headless Neovim (0.7+) LSP round trip against the Propriety server.
-- Usage: SERVER=dist/server.js HOVER_LINE=n HOVER_COL=m nvim --headless -u NONE -c 'luafile test/nvim/nvim-lsp.lua' FILE
-- Prints one "DIAG line:col code message" per diagnostic (1-based) and "HOVER text" (newlines as " | ").
-- Exit codes: 0 ok, 2 client did not start, 3 no diagnostics within 20 s, 4 no hover.
local out = function(s) io.stdout:write(s .. "\n") end
local server = os.getenv("SERVER") or "dist/server.js"
local hover_line = tonumber(os.getenv("HOVER_LINE") or "0")
local hover_col = tonumber(os.getenv("HOVER_COL") or "0")
local buf = vim.api.nvim_get_current_buf()
vim.bo[buf].filetype = "loss"

-- vim.lsp.start arrived in 0.8; start_client + buf_attach_client work on 0.7.
local client_id = vim.lsp.start_client({
  name = "propriety",
  cmd = { "node", server, "--stdio" },
  root_dir = vim.fn.getcwd(),
})
if not client_id then out("FAIL start_client"); vim.cmd("cquit 2") end
vim.lsp.buf_attach_client(buf, client_id)

-- 1. Wait for the first diagnostics, then for the engine's pass to settle (no change for 1 s).
local got = vim.wait(20000, function() return #vim.diagnostic.get(buf) > 0 end, 50)
if not got then out("FAIL no diagnostics"); vim.cmd("cquit 3") end
local last = -1
for _ = 1, 20 do
  vim.wait(1000, function() return false end, 100)
  local n = #vim.diagnostic.get(buf)
  if n == last then break end
  last = n
end
local diags = vim.diagnostic.get(buf)
table.sort(diags, function(a, b) return a.lnum < b.lnum or (a.lnum == b.lnum and a.col < b.col) end)
for _, d in ipairs(diags) do
  local code = d.code or (d.user_data and d.user_data.lsp and d.user_data.lsp.code) or ""
  out(string.format("DIAG %d:%d %s %s", d.lnum + 1, d.col + 1, code, (d.message:gsub("\n", " "))))
end

-- 2. Hover at the requested zero-based position.
local params = { textDocument = { uri = vim.uri_from_bufnr(buf) }, position = { line = hover_line, character = hover_col } }
local res = vim.lsp.buf_request_sync(buf, "textDocument/hover", params, 10000)
local text
for _, r in pairs(res or {}) do
  if r.result and r.result.contents then
    local c = r.result.contents
    text = type(c) == "string" and c or c.value
  end
end
if not text then out("FAIL no hover"); vim.cmd("cquit 4") end
out("HOVER " .. text:gsub("\n", " | "))

-- 3. Shut the server down cleanly.
vim.lsp.stop_client(client_id)
vim.wait(2000, function() return vim.lsp.get_client_by_id(client_id) == nil end, 50)
vim.cmd("qa!")
