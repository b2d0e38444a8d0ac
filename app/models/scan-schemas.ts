// Moved to app/contract/scan.ts (issue 13); this path stays for the imports not yet moved.
export * from "~/contract/scan";
