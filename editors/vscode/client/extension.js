// The editor side of `detent lsp`: starts the language server (the `detent` binary,
// setting `detent.path`) over standard input and output for `.detent` files.
'use strict';

const vscode = require('vscode');
const { LanguageClient, TransportKind } = require('vscode-languageclient/node');

let client;

/** Starts the client when the first `.detent` file opens. */
async function activate(context) {
  const command = vscode.workspace.getConfiguration('detent').get('path') || 'detent';
  const serverOptions = {
    run: { command, args: ['lsp'], transport: TransportKind.stdio },
    debug: { command, args: ['lsp'], transport: TransportKind.stdio },
  };
  const clientOptions = {
    documentSelector: [
      { scheme: 'file', language: 'detent' },
      { scheme: 'untitled', language: 'detent' },
    ],
  };
  client = new LanguageClient('detent', 'detent', serverOptions, clientOptions);
  context.subscriptions.push(
    vscode.workspace.onDidChangeConfiguration(async (e) => {
      if (e.affectsConfiguration('detent.path') && client) {
        await client.stop();
        await activate(context);
      }
    })
  );
  await client.start();
}

/** Stops the server with the editor. */
function deactivate() {
  return client ? client.stop() : undefined;
}

module.exports = { activate, deactivate };
