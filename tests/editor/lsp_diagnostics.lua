-- Neovim's built-in LSP client against `foldcheck lsp`: open a rig, wait for the
-- server's diagnostics, and write what Neovim holds (vim.diagnostic.get) as JSON.
-- Written for Neovim 0.7 (Debian 12), whose API is vim.lsp.start_client; newer
-- versions have it too. Inputs come from the environment:
--   FOLDCHECK_BIN  the foldcheck binary
--   FOLDCHECK_RIG  the rig file to open (absolute path)
--   FOLDCHECK_OUT  where to write the JSON
local function fail(msg)
  io.stderr:write("lsp_diagnostics.lua: " .. msg .. "\n")
  vim.cmd("cquit 1")
end

local bin = os.getenv("FOLDCHECK_BIN")
local rig = os.getenv("FOLDCHECK_RIG")
local out = os.getenv("FOLDCHECK_OUT")
if not (bin and rig and out) then
  fail("set FOLDCHECK_BIN, FOLDCHECK_RIG and FOLDCHECK_OUT")
  return
end

vim.cmd("edit " .. vim.fn.fnameescape(rig))
local buf = vim.api.nvim_get_current_buf()

local published = false
local default_handler = vim.lsp.handlers["textDocument/publishDiagnostics"]
local client_id = vim.lsp.start_client({
  name = "foldcheck",
  cmd = { bin, "lsp" },
  root_dir = vim.fn.fnamemodify(rig, ":h"),
  handlers = {
    ["textDocument/publishDiagnostics"] = function(err, result, ctx, config)
      default_handler(err, result, ctx, config)
      if result and result.uri == vim.uri_from_bufnr(buf) then
        published = true
      end
    end,
  },
})
if not client_id then
  fail("the client did not start")
  return
end
vim.lsp.buf_attach_client(buf, client_id)

if not vim.wait(30000, function() return published end, 20) then
  fail("no diagnostics were published within 30 s")
  return
end

local client = vim.lsp.get_client_by_id(client_id)
local rows = {}
for _, d in ipairs(vim.diagnostic.get(buf)) do
  local lsp = (d.user_data and d.user_data.lsp) or {}
  table.insert(rows, {
    rule = d.code or lsp.code,
    severity = d.severity,
    lnum = d.lnum,
    col = d.col,
    end_lnum = d.end_lnum,
    end_col = d.end_col,
    message = d.message,
  })
end
local result = {
  nvim = vim.version(),
  offset_encoding = client.offset_encoding,
  diagnostics = rows,
}
vim.fn.writefile({ vim.fn.json_encode(result) }, out)

client.stop()
vim.wait(5000, function() return client.is_stopped() end, 20)
vim.cmd("qall!")
