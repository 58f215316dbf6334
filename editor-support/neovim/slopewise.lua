-- slopewise for Neovim's built-in language client.
-- Copy to ~/.config/nvim/plugin/slopewise.lua (or require it from init.lua).
-- Needs `slopewise` on PATH; set vim.g.slopewise_path to use another program.

vim.filetype = vim.filetype or {}
if vim.filetype.add then
  vim.filetype.add({ extension = { slope = "slope" } })
else
  vim.cmd("autocmd BufRead,BufNewFile *.slope setfiletype slope")
end

vim.api.nvim_create_autocmd("FileType", {
  pattern = "slope",
  callback = function(args)
    vim.bo[args.buf].commentstring = "# %s"
    local config = {
      name = "slopewise",
      cmd = { vim.g.slopewise_path or "slopewise", "lsp" },
      root_dir = vim.fn.fnamemodify(vim.api.nvim_buf_get_name(args.buf), ":p:h"),
    }
    if vim.lsp.start then
      vim.lsp.start(config, { bufnr = args.buf })
    else
      -- Neovim 0.7
      local id = vim.lsp.start_client(config)
      if id then
        vim.lsp.buf_attach_client(args.buf, id)
      end
    end
  end,
})
