// Moved to app/contract/report.ts (issue 13); this path stays for the imports not yet moved.
export type * from "~/contract/report";
