// Why a verdict came out as it did, in words for the QA lead (the overview, the report page and
// the printed report all say the same). Flagged shots (ranging.md §4: wrap, outlier) that drive
// a failed test are named first, with their size and what the four tests (ranging.md §6) would
// give without them; then one sentence per failed test with its value and limit. Band
// explanations (which targets, which light) come after this, from the screens.
import { chiSquareQuantile } from "./quantiles.ts";
import type { AcceptanceTest, ReportShotRow, ShotFlag, TestName } from "./types.ts";

type Verdict = "pass" | "fail" | "insufficient";

export type ExplainInput = {
  verdict: Verdict;
  tests: AcceptanceTest[];
  shots: Pick<ReportShotRow, "id" | "errorMm" | "limitMm" | "within" | "excluded" | "flags">[];
  /** The rule's coverage factor k: a row's limit is k·T(D), so T(D) = limit / k. */
  coverageK: number;
  /**
   * issue 16: sums over ALL included shots of the selection. With them `shots` need only hold
   * the flagged included shots (a report of 100,000 shots explains itself from a few rows);
   * without them `shots` must hold every shot.
   */
  included?: IncludedTotals;
};

/** n, Σe, Σe², the count within its limit and ΣT(D) = Σ limit / k over the included shots. */
export type IncludedTotals = { n: number; sumMm: number; sumSqMm2: number; within: number; sumTMm: number };

export type FlaggedShot = { id: string; errorMm: number };
/** Included shots under one flag; a shot flagged both wrap and outlier counts as wrap (the more specific cause). */
export type FlaggedGroup = { flag: ShotFlag; shots: FlaggedShot[] };

export type VerdictExplanation = {
  verdict: Verdict;
  failed: TestName[];
  flagged: FlaggedGroup[];
  /** Flagged shots are few enough to be stray shots (≤ STRAY_SHARE of the included ones). */
  stray: boolean;
  /** Failed tests that would pass with the flagged shots left out. */
  drives: TestName[];
  /** The four tests recomputed without the flagged shots (null when no included shot is flagged). */
  without: { n: number; verdict: Verdict; tests: AcceptanceTest[] } | null;
  /** The sentence about flagged shots (a failed verdict, or an insufficient one whose tests they sink), or null. */
  flaggedLine: string | null;
  /** One sentence per failed test (or the count sentence when insufficient). */
  testLines: string[];
  /** flaggedLine (when any) then testLines. */
  lines: string[];
};

/**
 * Above this share of the included shots, flagged shots are a population of their own (a target,
 * a light, a range that reads wrong), not stray shots to leave out: the explanation then says
 * so instead of offering to exclude them. Common practice (blunders are rare); no published source.
 */
export const STRAY_SHARE = 0.1;

const NNBSP = "\u202f";

/** Groups of three digits split by a narrow no-break space from 10 000 up (SI brochure §5.4.4). */
function grouped(abs: number, digits: number): string {
  const s = abs.toFixed(digits);
  const [int, frac] = s.split(".");
  const i = int!.length > 4 ? int!.replace(/\B(?=(\d{3})+(?!\d))/g, NNBSP) : int!;
  return frac ? `${i}.${frac}` : i;
}

/** Signed with a real minus sign, e.g. "−29 953 mm", "+6.20 mm". */
export function formatSignedMm(v: number, digits: number): string {
  const s = grouped(Math.abs(v), digits);
  return `${Number(s.replace(/\D/g, "")) === 0 ? "" : v < 0 ? "−" : "+"}${s} mm`;
}

const mmDigits = (v: number) => (Math.abs(v) >= 100 ? 0 : 1);

function valueText(t: AcceptanceTest): string {
  if (t.value == null) return "—";
  if (t.name === "count") return `${t.value} shots`;
  if (t.name === "within") return `${t.value.toFixed(1)} %`;
  if (t.name === "bias") return formatSignedMm(t.value, 2);
  return `${grouped(t.value, 2)} mm`;
}

function limitText(t: AcceptanceTest): string {
  if (t.name === "count") return `${t.limit} shots`;
  if (t.name === "within") return `${t.limit.toFixed(1)} %`;
  if (t.name === "bias") return `±${grouped(t.limit, 2)} mm`;
  return `${grouped(t.limit, 2)} mm`;
}

const TEST_NOUN: Record<TestName, string> = {
  count: "shot count",
  within: "share within limit",
  bias: "bias",
  precision: "precision (SD)",
  reference: "reference uncertainty",
};
/** The four tests of ranging.md §6; the advisory reference test (§7) is explained on its own. */
const VERDICT_TESTS = new Set<TestName>(["count", "within", "bias", "precision"]);

/** "bias +0.84 mm (limit ±5.00 mm)" */
function testPhrase(t: AcceptanceTest): string {
  if (t.name === "count") return `${t.value ?? 0} shots (the rule needs ${t.limit})`;
  if (t.name === "within") return `${valueText(t)} within limit (the rule needs ${limitText(t)})`;
  return `${TEST_NOUN[t.name]} ${valueText(t)} (limit ${limitText(t)})`;
}

function testSentence(t: AcceptanceTest): string {
  const v = valueText(t);
  const l = limitText(t);
  if (t.name === "bias") return `Bias ${v} is beyond the limit ${l}.`;
  if (t.name === "precision") return `Precision (SD) ${v} is above the limit ${l}.`;
  if (t.name === "within") return `Only ${v} of shots lie within their limit; the rule needs ${l}.`;
  if (t.name === "reference") {
    return t.value == null
      ? "The reference distances' uncertainty is unknown for some shots; the rule needs it in the verdict."
      : `Reference uncertainty ${v} is above the limit ${l} the rule needs in the verdict.`;
  }
  return `Only ${t.value ?? 0} included shots; the rule needs ${t.limit}.`;
}

const list = (xs: string[]) => (xs.length <= 1 ? (xs[0] ?? "") : `${xs.slice(0, -1).join(", ")} and ${xs[xs.length - 1]}`);

function groupText(g: FlaggedGroup): string {
  const n = g.shots.length;
  // the largest first; beyond three, the rest are counted
  const sizes = [...g.shots].sort((a, b) => Math.abs(b.errorMm) - Math.abs(a.errorMm)).map((s) => formatSignedMm(s.errorMm, mmDigits(s.errorMm)).replace(/ mm$/, ""));
  const shown = sizes.length > 3 ? `largest ${sizes.slice(0, 3).join(", ")} mm; ${sizes.length - 3} more` : `${sizes.join(", ")} mm`;
  return `${n} shot${n === 1 ? "" : "s"} flagged ${g.flag} (${shown})`;
}

/** The four tests of ranging.md §6 over a subset of rows, with the limits the report used. */
function testsWithout(input: ExplainInput, keep: ExplainInput["shots"], drop: ExplainInput["shots"]): { n: number; verdict: Verdict; tests: AcceptanceTest[] } {
  const byName = new Map(input.tests.map((t) => [t.name, t]));
  const minShots = byName.get("count")?.limit ?? 0;
  const minWithin = byName.get("within")?.limit ?? 0;
  const a = byName.get("bias")?.limit ?? 0;
  let n: number;
  let s1 = 0;
  let within = 0;
  let sumT = 0;
  let sd: number | null = null;
  const tot = input.included;
  if (tot) {
    // the totals less the dropped shots (their sums are small beside the totals' magnitude)
    let sq = tot.sumSqMm2;
    s1 = tot.sumMm;
    within = tot.within;
    sumT = tot.sumTMm;
    for (const r of drop) {
      s1 -= r.errorMm;
      sq -= r.errorMm * r.errorMm;
      if (r.within) within--;
      sumT -= r.limitMm / input.coverageK;
    }
    n = tot.n - drop.length;
    if (n > 1) sd = Math.sqrt(Math.max(0, sq - (s1 * s1) / n) / (n - 1));
  } else {
    n = keep.length;
    for (const r of keep) {
      s1 += r.errorMm;
      if (r.within) within++;
      sumT += r.limitMm / input.coverageK;
    }
  }
  const bias = n ? s1 / n : null;
  if (!tot && n > 1 && bias != null) {
    let ss = 0;
    for (const r of keep) ss += (r.errorMm - bias) ** 2;
    sd = Math.sqrt(ss / (n - 1));
  }
  const withinPct = n ? (100 * within) / n : null;
  // T is linear in D, so the mean of T(Dᵢ) is T(D̄), the report's σ
  const sigma = n ? sumT / n : 0;
  const precisionLimit = n > 1 ? sigma * Math.sqrt(chiSquareQuantile(0.95, n - 1) / (n - 1)) : sigma;
  const tests: AcceptanceTest[] = [
    { name: "count", pass: n >= minShots, value: n, limit: minShots },
    { name: "within", pass: withinPct != null && withinPct >= minWithin, value: withinPct, limit: minWithin },
    { name: "bias", pass: bias != null && Math.abs(bias) <= a, value: bias, limit: a },
    { name: "precision", pass: sd != null && sd <= precisionLimit, value: sd, limit: precisionLimit },
  ];
  const verdict: Verdict = !tests[0]!.pass ? "insufficient" : tests.every((t) => t.pass) ? "pass" : "fail";
  return { n, verdict, tests };
}

/**
 * Explains a report's verdict. Reads only what the report carries (tests, shot rows with
 * flags and limits) plus the rule's k, so the browser and the server give the same words.
 */
export function explainVerdict(input: ExplainInput): VerdictExplanation {
  const failedTests = input.tests.filter((t) => VERDICT_TESTS.has(t.name) && !t.pass);
  const failed = failedTests.map((t) => t.name);
  const count = input.tests.find((t) => t.name === "count");
  const reference = input.tests.find((t) => t.name === "reference");
  // ranging.md §7: with enough shots, only the reference test (when in the verdict) holds a pass back
  const insufficientBy = count?.pass && reference && reference.pass !== true ? reference : count;
  const testLines =
    input.verdict === "insufficient"
      ? [testSentence(insufficientBy ?? { name: "count", pass: false, value: 0, limit: 0 })]
      : input.verdict === "fail"
        ? failedTests.filter((t) => t.name !== "count").map(testSentence)
        : [];
  const included = input.shots.filter((s) => !s.excluded);
  const wrap: FlaggedShot[] = [];
  const outlier: FlaggedShot[] = [];
  for (const s of included) {
    if (s.flags.includes("wrap")) wrap.push({ id: s.id, errorMm: s.errorMm });
    else if (s.flags.includes("outlier")) outlier.push({ id: s.id, errorMm: s.errorMm });
  }
  const flagged: FlaggedGroup[] = [];
  if (wrap.length) flagged.push({ flag: "wrap", shots: wrap });
  if (outlier.length) flagged.push({ flag: "outlier", shots: outlier });
  const nFlagged = wrap.length + outlier.length;
  const nIncluded = input.included ? input.included.n : included.length;
  const stray = nFlagged > 0 && nFlagged <= Math.max(1, STRAY_SHARE * nIncluded);

  let without: VerdictExplanation["without"] = null;
  let drives: TestName[] = [];
  let flaggedLine: string | null = null;
  if (nFlagged > 0) {
    const ids = new Set(flagged.flatMap((g) => g.shots.map((s) => s.id)));
    without = testsWithout(
      input,
      included.filter((s) => !ids.has(s.id)),
      included.filter((s) => ids.has(s.id)),
    );
    const after = new Map(without.tests.map((t) => [t.name, t]));
    drives = failed.filter((name) => name !== "count" && after.get(name)!.pass);
    // an insufficient verdict names them too when they already sink a test: the next shots will not mend that
    if (input.verdict === "fail" || (input.verdict === "insufficient" && stray && drives.length > 0)) {
      const who = list(flagged.map(groupText));
      const one = nFlagged === 1;
      const them = one ? "it" : "them";
      const stillFailing = failedTests.filter((t) => t.name !== "count" && !drives.includes(t.name));
      if (!stray) {
        const pct = ((100 * nFlagged) / nIncluded).toFixed(0);
        flaggedLine = `${who}: ${pct} % of the included shots, too many to be stray shots — look for a pattern (targets, light, range) before excluding any.`;
      } else if (drives.length) {
        const tests = drives.map((n) => TEST_NOUN[n]);
        const phrases = drives.map((n) => testPhrase(after.get(n)!));
        let outcome: string;
        if (without.verdict === "pass") outcome = ": a pass";
        else if (without.verdict === "insufficient") outcome = `, but leave only ${without.n} shot${without.n === 1 ? "" : "s"} where the rule needs ${after.get("count")!.limit} (insufficient)`;
        else {
          const other = without.tests.filter((t) => !t.pass).map((t) => TEST_NOUN[t.name]);
          outcome = ` (the ${list(other)} test${other.length === 1 ? "" : "s"} would still fail)`;
        }
        flaggedLine = `${who} ${one ? "drives" : "drive"} the ${list(tests)} test${tests.length === 1 ? "" : "s"}; excluding ${them} would give ${list(phrases)}${outcome}.`;
      } else if (stillFailing.length) {
        const phrases = stillFailing.map((t) => testPhrase(after.get(t.name)!));
        flaggedLine = `${who} ${one ? "does" : "do"} not explain the failure: without ${them}, ${list(phrases)} would still fail.`;
      }
    }
  }
  return { verdict: input.verdict, failed, flagged, stray, drives, without, flaggedLine, testLines, lines: flaggedLine ? [flaggedLine, ...testLines] : testLines };
}
