-- Seam for Neovim (0.8 or later; built-in LSP client, no plugin needed).
-- Put this file on your runtimepath (e.g. ~/.config/nvim/plugin/seam.lua) or paste it into init.lua.
-- Neovim 0.7: use vim.lsp.start_client{...} with the same table, then vim.lsp.buf_attach_client(0, id).
vim.api.nvim_create_autocmd("FileType", {
  pattern = { "verilog", "systemverilog" },
  callback = function(args)
    local found = vim.fs.find({ "seam.toml", ".git" }, { upward = true, path = vim.fs.dirname(args.file) })[1]
    vim.lsp.start({
      name = "seam",
      cmd = { "seam", "serve", "--log-level", "warn" },
      root_dir = found and vim.fs.dirname(found) or vim.fn.getcwd(),
      -- the keys of docs/editors.md, "Settings"
      init_options = { inlayHints = true },
    })
  end,
})
-- Inlay hints (Neovim 0.10+): vim.lsp.inlay_hint.enable(true)
