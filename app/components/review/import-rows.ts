// Moved to app/contract/import-rows.ts (issue 13); this path stays for the imports not yet moved.
export * from "~/contract/import-rows";
