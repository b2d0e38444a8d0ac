// Pass/fail is never colour alone: each verdict has a word and its own shape.
export type Verdict = "pass" | "fail" | "insufficient";

const WORDS: Record<Verdict, string> = {
  pass: "Pass",
  fail: "Fail",
  insufficient: "Not enough shots",
};

export function VerdictShape({ verdict, size = 18 }: { verdict: Verdict; size?: number }) {
  if (verdict === "pass")
    return (
      <svg width={size} height={size} viewBox="0 0 20 20" aria-hidden="true">
        <circle cx="10" cy="10" r="9" fill="currentColor" />
        <path d="M5.5 10.5l3 3 6-7" stroke="var(--bg)" strokeWidth="2.4" fill="none" />
      </svg>
    );
  if (verdict === "fail")
    return (
      <svg width={size} height={size} viewBox="0 0 20 20" aria-hidden="true">
        <rect x="1.5" y="1.5" width="17" height="17" fill="currentColor" />
        <path d="M6 6l8 8M14 6l-8 8" stroke="var(--bg)" strokeWidth="2.4" />
      </svg>
    );
  return (
    <svg width={size} height={size} viewBox="0 0 20 20" aria-hidden="true">
      <path d="M10 1.5l8.5 8.5-8.5 8.5L1.5 10z" fill="none" stroke="currentColor" strokeWidth="2.4" />
    </svg>
  );
}

export function VerdictBadge({ verdict }: { verdict: Verdict }) {
  const color = verdict === "pass" ? "text-pass" : verdict === "fail" ? "text-fail" : "text-warn";
  return (
    <span className={`inline-flex items-center gap-1.5 font-bold ${color}`} data-verdict={verdict}>
      <VerdictShape verdict={verdict} />
      <span>{WORDS[verdict]}</span>
    </span>
  );
}

export function WithinMark({ within }: { within: boolean }) {
  return <VerdictBadge verdict={within ? "pass" : "fail"} />;
}
