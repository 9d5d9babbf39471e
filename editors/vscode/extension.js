// Seam for VS Code: starts `seam serve` over stdio and hands it the Verilog/SystemVerilog files.
'use strict';
const vscode = require('vscode');
const { LanguageClient, TransportKind } = require('vscode-languageclient/node');

let client;

function settings() {
  const c = vscode.workspace.getConfiguration('seam');
  const opts = { inlayHints: c.get('inlayHints', true), debounceMs: c.get('debounceMs', 100) };
  const docs = c.get('rulesDocsUrl', '');
  if (docs) opts.rulesDocsUrl = docs;
  return { path: c.get('path', 'seam'), logLevel: c.get('logLevel', 'info'), opts };
}

async function activate(context) {
  const s = settings();
  const run = { command: s.path, args: ['serve', '--log-level', s.logLevel], transport: TransportKind.stdio };
  client = new LanguageClient(
    'seam',
    'Seam',
    { run, debug: run },
    {
      documentSelector: [
        { scheme: 'file', language: 'verilog' },
        { scheme: 'file', language: 'systemverilog' },
      ],
      initializationOptions: s.opts,
      // the server pulls the `seam` section again when it changes
      synchronize: { configurationSection: 'seam' },
    }
  );
  context.subscriptions.push(
    vscode.commands.registerCommand('seam.reanalyze', () =>
      client.sendRequest('workspace/executeCommand', { command: 'seam.reanalyze', arguments: [] })
    )
  );
  await client.start();
}

function deactivate() {
  return client ? client.stop() : undefined;
}

module.exports = { activate, deactivate };
