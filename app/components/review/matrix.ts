// Moved to app/contract/report-matrix.ts (issue 13); this path stays for the imports not yet moved.
export * from "~/contract/report-matrix";
