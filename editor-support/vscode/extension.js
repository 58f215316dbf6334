// Starts `slopewise lsp` for .slope files; everything else comes from the server.
const vscode = require("vscode");
const { LanguageClient, TransportKind } = require("vscode-languageclient/node");

let client;

function activate(context) {
  const command = vscode.workspace.getConfiguration("slopewise").get("path") || "slopewise";
  const server = { command, args: ["lsp"], transport: TransportKind.stdio };
  client = new LanguageClient(
    "slopewise",
    "slopewise",
    { run: server, debug: server },
    { documentSelector: [{ scheme: "file", language: "slope" }] }
  );
  context.subscriptions.push(client);
  return client.start();
}

function deactivate() {
  return client ? client.stop() : undefined;
}

module.exports = { activate, deactivate };
