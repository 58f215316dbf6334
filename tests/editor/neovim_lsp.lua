-- End-to-end editor test: headless Neovim's built-in client attaches
-- `slopewise lsp` to a model file, waits for diagnostics, asks for completion
-- and writes what it received as JSON for the Rust test to check.
--
-- Environment: SLOPEWISE_BIN (the binary), SLOPE_FILE (the model file),
-- OUT_FILE (where the JSON goes), COMPLETE_LINE / COMPLETE_COL (0-based,
-- UTF-16) where completion is asked for.

local bin = os.getenv("SLOPEWISE_BIN")
local file = os.getenv("SLOPE_FILE")
local out_file = os.getenv("OUT_FILE")
local line = tonumber(os.getenv("COMPLETE_LINE"))
local col = tonumber(os.getenv("COMPLETE_COL"))

local result = { diagnostics = {}, completion = {}, errors = {} }

local function finish()
  local f = assert(io.open(out_file, "w"))
  f:write(vim.fn.json_encode(result))
  f:close()
  vim.cmd("qall!")
end

vim.cmd("edit " .. vim.fn.fnameescape(file))
vim.bo.filetype = "slope"
local bufnr = vim.api.nvim_get_current_buf()

local published = false
local config = {
  name = "slopewise",
  cmd = { bin, "lsp" },
  root_dir = vim.fn.fnamemodify(file, ":h"),
  handlers = {
    ["textDocument/publishDiagnostics"] = function(err, params, ctx, cfg)
      vim.lsp.handlers["textDocument/publishDiagnostics"](err, params, ctx, cfg)
      if params and #params.diagnostics > 0 then
        published = true
      end
    end,
  },
}
-- `vim.lsp.start` exists from Neovim 0.8; older versions have start_client.
local client_id
if vim.lsp.start then
  client_id = vim.lsp.start(config)
else
  client_id = vim.lsp.start_client(config)
  vim.lsp.buf_attach_client(bufnr, client_id)
end
if not client_id then
  table.insert(result.errors, "the client did not start")
  finish()
end

if not vim.wait(30000, function() return published end, 50) then
  table.insert(result.errors, "no diagnostics within 30 s")
end

for _, d in ipairs(vim.diagnostic.get(bufnr)) do
  table.insert(result.diagnostics, {
    lnum = d.lnum,
    col = d.col,
    end_lnum = d.end_lnum,
    end_col = d.end_col,
    severity = d.severity,
    message = d.message,
    code = d.code or (d.user_data and d.user_data.lsp and d.user_data.lsp.code),
    source = d.source,
  })
end

local params = {
  textDocument = { uri = vim.uri_from_bufnr(bufnr) },
  position = { line = line, character = col },
}
local responses = vim.lsp.buf_request_sync(bufnr, "textDocument/completion", params, 10000)
if not responses then
  table.insert(result.errors, "no completion answer within 10 s")
else
  for _, r in pairs(responses) do
    if r.err then
      table.insert(result.errors, vim.inspect(r.err))
    end
    local items = r.result and (r.result.items or r.result) or {}
    for _, item in ipairs(items) do
      table.insert(result.completion, { label = item.label, detail = item.detail, kind = item.kind })
    end
  end
end

vim.lsp.stop_client(client_id)
finish()
