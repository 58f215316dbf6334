// Tokenizes the demo model files with the VS Code extension's TextMate grammar
// and checks the scopes of chosen words. Usage: node textmate_test.js NODE_MODULES
// (a folder holding vscode-textmate and vscode-oniguruma). Exits 1 on a mismatch.
"use strict";
const fs = require("fs");
const path = require("path");

const modules = process.argv[2];
const root = path.join(__dirname, "..", "..");
const grammarPath = path.join(root, "editor-support", "vscode", "syntaxes", "slope.tmLanguage.json");
const vsctm = require(path.join(modules, "vscode-textmate"));
const onig = require(path.join(modules, "vscode-oniguruma"));

// [file, line (1-based), text of the token, expected innermost scope]
const EXPECT = [
  ["teams.slope", 1, "# slopewise demo: remote days and focus in project teams (invented demo data)", "comment.line.number-sign.slope"],
  ["teams.slope", 5, "source", "keyword.control.statement.slope"],
  ["teams.slope", 5, "\"", "string.quoted.double.slope"],
  ["teams.slope", 6, "groups", "keyword.control.statement.slope"],
  ["teams.slope", 6, "in", "keyword.other.slope"],
  ["teams.slope", 8, "let", "keyword.control.statement.slope"],
  ["teams.slope", 8, "remote_w", "variable.other.definition.slope"],
  ["teams.slope", 8, "within", "support.function.slope"],
  ["teams.slope", 8, "remote_days", "variable.other.slope"],
  ["teams.slope", 11, "model", "keyword.control.statement.slope"],
  ["teams.slope", 11, "full", "entity.name.type.model.slope"],
  ["teams.slope", 12, "*", "keyword.operator.slope"],
  ["teams.slope", 13, "vary", "keyword.control.statement.slope"],
  ["teams.slope", 13, "intercept", "support.constant.option.slope"],
  ["teams.slope", 13, "by", "keyword.other.slope"],
  ["teams.slope", 15, "reml", "support.constant.option.slope"],
  ["teams.slope", 16, "satterthwaite", "support.constant.option.slope"],
  ["teams.slope", 19, "probe", "keyword.control.statement.slope"],
  ["teams.slope", 19, "across", "keyword.other.slope"],
  ["teams.slope", 19, "-1sd", "constant.numeric.slope"],
  ["teams.slope", 19, "mean", "support.constant.option.slope"],
  ["teams.slope", 20, "0.05", "constant.numeric.slope"],
  ["suppliers.slope", 6, "panel", "keyword.control.statement.slope"],
  ["suppliers.slope", 6, "over", "keyword.other.slope"],
  ["suppliers.slope", 9, "log", "support.function.slope"],
  ["suppliers.slope", 10, "fixed", "keyword.control.statement.slope"],
  ["suppliers.slope", 11, "cluster", "support.constant.option.slope"],
  ["suppliers.slope", 15, "^", "keyword.operator.slope"],
  ["suppliers.slope", 15, "2", "constant.numeric.slope"],
];

async function main() {
  const wasm = fs.readFileSync(path.join(modules, "vscode-oniguruma", "release", "onig.wasm")).buffer;
  await onig.loadWASM(wasm);
  const registry = new vsctm.Registry({
    onigLib: Promise.resolve({
      createOnigScanner: (p) => new onig.OnigScanner(p),
      createOnigString: (s) => new onig.OnigString(s),
    }),
    loadGrammar: async (scope) =>
      scope === "source.slope"
        ? vsctm.parseRawGrammar(fs.readFileSync(grammarPath, "utf8"), grammarPath)
        : null,
  });
  const grammar = await registry.loadGrammar("source.slope");
  const tokens = {};
  let failed = 0;
  let passed = 0;
  for (const file of ["teams.slope", "suppliers.slope"]) {
    const lines = fs.readFileSync(path.join(root, "demo-data", file), "utf8").split("\n");
    let stack = vsctm.INITIAL;
    tokens[file] = lines.map((line, i) => {
      const r = grammar.tokenizeLine(line, stack);
      stack = r.ruleStack;
      return r.tokens.map((t) => {
        const text = line.slice(t.startIndex, t.endIndex);
        // Every piece of text other than spaces gets a scope of its own.
        if (text.trim() !== "" && t.scopes.length < 2) {
          console.log(`FAIL ${file}:${i + 1}: "${text}" has no scope`);
          failed++;
        }
        return { text, scope: t.scopes[t.scopes.length - 1] };
      });
    });
  }
  for (const [file, line, text, scope] of EXPECT) {
    const found = tokens[file][line - 1].filter((t) => t.text.trim() === text);
    if (found.some((t) => t.scope === scope)) {
      passed++;
    } else {
      failed++;
      const got = tokens[file][line - 1].map((t) => `${JSON.stringify(t.text)}=${t.scope}`).join(" ");
      console.log(`FAIL ${file}:${line}: "${text}" should be ${scope}; line tokens: ${got}`);
    }
  }
  console.log(`grammar: ${passed} passed, ${failed} failed`);
  process.exit(failed === 0 ? 0 : 1);
}

main().catch((e) => {
  console.log(`FAIL ${e.stack || e}`);
  process.exit(1);
});
