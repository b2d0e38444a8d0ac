// Moved to app/contract/registry.ts (issue 13); this path stays for the imports not yet moved.
export * from "~/contract/registry";
