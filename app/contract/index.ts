// The contract between the tablet and the server (issue 13): the bodies of api.md as zod schemas,
// the record types both sides derive from them, the record → ranging-core mapping with its error
// paths, and the CSV import's row mapping. Pure: imports only ~/domain and zod, so the tablet, the
// seed builders, the models and the routes may all use it. See docs/decisions/0005-contract-module.md.
export * from "./errors";
export * from "./sync";
export * from "./shot-input";
