// Tokenizes every example spec (and a fixture with the syntax the examples lack) with
// the grammar, through the TextMate engine editors use (vscode-textmate with the
// Oniguruma regular expressions of vscode-oniguruma), and checks the scopes of
// comments, keywords, names, durations; and that no character of code is left without
// a scope of its own.
'use strict';

const test = require('node:test');
const assert = require('node:assert');
const fs = require('node:fs');
const path = require('node:path');
const vsctm = require('vscode-textmate');
const oniguruma = require('vscode-oniguruma');

const here = __dirname;
const grammarPath = path.join(here, '..', 'syntaxes', 'detent.tmLanguage.json');
const grammarJson = JSON.parse(fs.readFileSync(grammarPath, 'utf8'));
const KEYWORDS = new Set(grammarJson['x-keywords']);
const UNITS = new Set(['ticks', 'us', 'ms', 's', 'steps']);

async function loadGrammar() {
  const wasm = fs.readFileSync(
    path.join(path.dirname(require.resolve('vscode-oniguruma')), 'onig.wasm')
  );
  await oniguruma.loadWASM(wasm.buffer.slice(wasm.byteOffset, wasm.byteOffset + wasm.byteLength));
  const registry = new vsctm.Registry({
    onigLib: Promise.resolve({
      createOnigScanner: (s) => new oniguruma.OnigScanner(s),
      createOnigString: (s) => new oniguruma.OnigString(s),
    }),
    loadGrammar: async (scope) =>
      scope === 'source.detent'
        ? vsctm.parseRawGrammar(fs.readFileSync(grammarPath, 'utf8'), grammarPath)
        : null,
  });
  return registry.loadGrammar('source.detent');
}

/** Per line, per character: the scopes of the token that covers it. */
function tokenize(grammar, text) {
  const lines = text.split('\n');
  let state = vsctm.INITIAL;
  return lines.map((line) => {
    const r = grammar.tokenizeLine(line, state);
    state = r.ruleStack;
    const at = new Array(line.length);
    for (const t of r.tokens) {
      for (let i = t.startIndex; i < Math.min(t.endIndex, line.length); i++) at[i] = t.scopes;
    }
    return { line, at };
  });
}

/**
 * An independent reading of the text: which characters are comments (line, doc and
 * nested block comments), written without the grammar.
 */
function commentMask(text) {
  const mask = [];
  let depth = 0;
  for (const line of text.split('\n')) {
    const m = new Array(line.length).fill(false);
    let i = 0;
    while (i < line.length) {
      if (depth > 0) {
        m[i] = true;
        if (line.startsWith('*/', i)) { m[i + 1] = true; depth--; i += 2; continue; }
        if (line.startsWith('/*', i)) { m[i + 1] = true; depth++; i += 2; continue; }
        i++;
      } else if (line.startsWith('//', i)) {
        for (let j = i; j < line.length; j++) m[j] = true;
        break;
      } else if (line.startsWith('/*', i)) {
        m[i] = m[i + 1] = true; depth++; i += 2;
      } else {
        i++;
      }
    }
    mask.push(m);
  }
  return mask;
}

function has(scopes, prefix) {
  return scopes.some((s) => s.startsWith(prefix));
}

function specs() {
  const examples = path.join(here, '..', '..', '..', 'examples');
  const files = fs.readdirSync(examples).filter((f) => f.endsWith('.detent'))
    .map((f) => path.join(examples, f));
  assert.ok(files.length >= 5, 'the example specs are in examples/');
  files.push(path.join(here, 'fixtures', 'time.detent'));
  return files;
}

const IDENT = /(?:r#)?[A-Za-z_][A-Za-z0-9_]*/y;

test('every example is scoped: comments, keywords, names, durations', async () => {
  const grammar = await loadGrammar();
  let checked = { comment: 0, keyword: 0, name: 0, duration: 0, trigger: 0 };
  for (const file of specs()) {
    const text = fs.readFileSync(file, 'utf8');
    const lines = tokenize(grammar, text);
    const mask = commentMask(text);
    const where = (n, c) => `${path.basename(file)}:${n + 1}:${c + 1}`;
    lines.forEach(({ line, at }, n) => {
      // Comments, and nothing else, are comments.
      for (let c = 0; c < line.length; c++) {
        if (/\s/.test(line[c])) continue;
        const isComment = has(at[c], 'comment.');
        assert.strictEqual(isComment, mask[n][c],
          `${where(n, c)}: ${mask[n][c] ? 'comment not scoped as comment' : 'code scoped as comment'}: ${line}`);
        if (isComment) { checked.comment++; continue; }
        // No character of code is left with only the file's scope.
        assert.ok(at[c].length >= 2, `${where(n, c)}: '${line[c]}' has no scope: ${line}`);
      }
      // Words: keywords are keywords, names are not.
      for (let c = 0; c < line.length;) {
        IDENT.lastIndex = c;
        const m = (c === 0 || !/[A-Za-z0-9_]/.test(line[c - 1])) ? IDENT.exec(line) : null;
        if (!m || mask[n][c]) { c++; continue; }
        const word = m[0];
        const scopes = at[c];
        const keywordish = has(scopes, 'keyword.') || has(scopes, 'storage.') ||
          has(scopes, 'constant.language.');
        if (UNITS.has(word)) {
          // A unit after a number.
          if (/\d\s*$/.test(line.slice(0, c))) {
            assert.ok(has(scopes, 'keyword.other.unit.detent'), `${where(n, c)}: unit ${word}`);
            const num = line.slice(0, c).match(/(\d+)\s*$/);
            const nc = c - num[0].length;
            assert.ok(has(at[nc], 'constant.numeric.integer.detent'), `${where(n, nc)}: number`);
            assert.ok(has(at[nc], 'constant.numeric.duration.detent') || word === 'steps',
              `${where(n, nc)}: duration`);
            checked.duration++;
          }
        } else if (KEYWORDS.has(word) && !has(scopes, 'meta.attribute')) {
          assert.ok(keywordish, `${where(n, c)}: keyword \`${word}\` scoped ${scopes.join(' ')}`);
          checked.keyword++;
        } else if (word !== '_' && !has(scopes, 'meta.attribute')) {
          assert.ok(!has(scopes, 'keyword.') && !has(scopes, 'storage.'),
            `${where(n, c)}: name \`${word}\` scoped as a keyword: ${scopes.join(' ')}`);
        }
        c += word.length;
      }
      // Names after their keyword.
      const code = line.split('//')[0];
      for (const [re, scope] of [
        [/\bmachine\s+(\w+)/g, 'entity.name.type.machine.detent'],
        [/\bstate\s+(\w+)/g, 'entity.name.type.state.detent'],
        [/\bgroup\s+(\w+)/g, 'entity.name.type.group.detent'],
        [/\bstart\s+(\w+)/g, 'entity.name.type.state.detent'],
        [/=>\s*(?!stay\b)(\w+)/g, 'entity.name.type.state.detent'],
        [/\bdo\s+(\w+)\b(?!\s*[+-]?=)/g, 'entity.name.function.action.detent'],
        [/\bemit\s+(\w+)/g, 'variable.other.output.detent'],
      ]) {
        for (const m of code.matchAll(re)) {
          const c = m.index + m[0].length - m[1].length;
          if (mask[n][c]) continue;
          assert.ok(has(at[c], scope), `${where(n, c)}: \`${m[1]}\` not ${scope}: ${at[c].join(' ')}`);
          checked.name++;
        }
      }
      // Events in a rule's trigger.
      const trig = /(?:^|[{;])\s*(?:preempt\s+)?((?:[A-Z]\w*\s*\|\s*)*[A-Z]\w*)\s*(?=if\b|else\b|=>)/g;
      for (const m of code.matchAll(trig)) {
        const start = m.index + m[0].indexOf(m[1]);
        for (const e of m[1].matchAll(/\w+/g)) {
          const c = start + e.index;
          assert.ok(has(at[c], 'variable.other.event.detent'),
            `${where(n, c)}: event \`${e[0]}\` scoped ${at[c].join(' ')}`);
          checked.trigger++;
        }
      }
    });
  }
  for (const [what, count] of Object.entries(checked)) {
    assert.ok(count > 3, `only ${count} ${what} checks: the test reads too little`);
  }
});

test('the new syntax: time base, after, counters, ensure', async () => {
  const grammar = await loadGrammar();
  const text = fs.readFileSync(path.join(here, 'fixtures', 'time.detent'), 'utf8');
  const lines = tokenize(grammar, text);
  const scopeOf = (needle, nth = 0, offset = 0) => {
    let seen = 0;
    for (const { line, at } of lines) {
      let i = line.indexOf(needle);
      while (i >= 0) {
        if (!has(at[i], 'comment.') && seen++ === nth) return at[i + offset];
        i = line.indexOf(needle, i + 1);
      }
    }
    throw new Error(`${needle} not found`);
  };
  assert.ok(has(scopeOf('timebase'), 'keyword.other.declaration.detent'));
  assert.ok(has(scopeOf('Tick 1 ms'), 'variable.other.event.detent'));
  assert.ok(has(scopeOf('1 ms', 0, 2), 'keyword.other.unit.detent'));
  assert.ok(has(scopeOf('after 3 s'), 'keyword.control.after.detent'));
  assert.ok(has(scopeOf('500ms', 0, 3), 'keyword.other.unit.detent'));
  assert.ok(has(scopeOf('counters'), 'keyword.other.declaration.detent'));
  assert.ok(has(scopeOf('strikes to'), 'variable.other.counter.detent'));
  assert.ok(has(scopeOf('strikes += 1'), 'variable.other.counter.detent'));
  assert.ok(has(scopeOf('ensure'), 'keyword.other.declaration.detent'));
  assert.ok(has(scopeOf('within'), 'keyword.other.detent'));
  assert.ok(has(scopeOf('hold && strikes'), 'variable.other.condition.detent'));
  assert.ok(has(scopeOf('Off && lamp'), 'entity.name.type.state.detent'));
  assert.ok(has(scopeOf('dispatch'), 'keyword.other.attribute.detent'));
  assert.ok(has(scopeOf('crate'), 'storage.modifier.visibility.detent'));
  assert.ok(has(scopeOf('_ => stay'), 'constant.language.wildcard.detent'));
  const block = lines.find(({ line }) => line.includes('a block comment'));
  assert.ok(has(block.at[block.line.indexOf('a block')], 'comment.block.detent'));
  assert.ok(!has(block.at[block.line.indexOf('lamp;')], 'comment.'));
});

test('the grammar lists every keyword of the language, those a later issue adds included', () => {
  for (const k of ['machine', 'events', 'inputs', 'outputs', 'actions', 'start', 'unhandled',
    'never', 'recover', 'except', 'timebase', 'after', 'counters', 'ensure', 'within',
    'state', 'terminal', 'group', 'emit', 'enter', 'leave', 'do', 'preempt', 'if', 'else',
    'stay', 'in', 'true', 'false', 'steps']) {
    assert.ok(KEYWORDS.has(k), k);
  }
});
