/**
 * Custom messages shared by the language server, the VS Code client and the curve viewer webview.
 * Plain data only (JSON-serialisable); no imports from either side.
 */

/** A sampled curve; y is null where the function is undefined or infinite (drawn as a gap). */
export interface SeriesData {
  id: string;
  label: string;
  x: number[];
  y: (number | null)[];
}

/** Everything the viewer or the report draws for one loss. */
export interface LossCurves {
  loss: string;
  verdict: "strictly-proper" | "proper" | "improper" | "unknown";
  summary: string;
  params: { name: string; value: number; lo: number | null; hi: number | null }[];
  threshold: number;
  /** l1 and l0 on q. */
  partials: SeriesData[];
  /** Bayes risk H(η). */
  bayes: SeriesData | null;
  /** Weight function w(q). */
  weight: SeriesData | null;
  /** Conditional risk L(η, ·) for a few η, with the minimiser for each η. */
  conditionalRisk: { eta: number; series: SeriesData; minimiser: number; minimumRisk?: number | null }[];
  /** δ and δ** of f = −H. */
  modulus: SeriesData[];
  /** Decision-regret bound vs surrogate regret, one series per route. */
  bounds: SeriesData[];
  /** Link ψ(q) for composite and margin losses. */
  link: SeriesData | null;
  notes: string[];
  /** Figures at the parameter values drawn (they follow the viewer's sliders). */
  figures?: LossFigures;
  /** Minimiser q*(η) of the conditional risk at the sampled η (equal to η for a proper loss). */
  minimiser?: SeriesData | null;
  /** Suggested y range per chart ("partials", "conditional", "bayes", "weight", "link"), clipped where a curve is unbounded. */
  ranges?: Record<string, [number, number]>;
}

/** The curvature figures of one loss at the drawn parameter values. */
export interface LossFigures {
  lambda: number | null;
  modulus: { coefficient: number; power: number } | null;
  exponents: { viaModulus: number | null; direct: number | null };
  /** Surrogate regret needed for each decision regret, by route (null: no guarantee by that route). */
  inverseTable?: { decisionRegret: number; viaModulus: number | null; direct: number | null; psiTransform: number | null }[];
  /** Why the two exponents differ, when they do. */
  exponentNote?: string | null;
  /** Units of the decision and surrogate regrets. */
  units?: { decisionRegret: string; surrogateRegret: string };
}

export interface CurvesParams {
  uri: string;
  /** Losses to include (all when absent). */
  losses?: string[];
  /** Parameter overrides per loss (for the viewer's sliders). */
  overrides?: Record<string, Record<string, number>>;
  /** η values at which to sample the conditional risk. */
  etas?: number[];
  /** Samples per curve (default 151; fewer while a slider is dragged). */
  points?: number;
}

export interface CurvesResult {
  uri: string;
  version: number | null;
  losses: LossCurves[];
  /** Why a loss could not be drawn (errors in it, analysis failed…). */
  skipped: { loss: string; reason: string }[];
}

/** LSP request: sampled curves of the losses in a document. */
export const CURVES_REQUEST = "propriety/curves";

export interface GenerateParams {
  uri: string;
  loss?: string;
  target: "torch" | "jax" | "numpy" | "ts";
  input?: "prob" | "score";
  allowImproper?: boolean;
}

export interface GenerateResult {
  ok: boolean;
  code: string | null;
  message: string | null;
  /** Suggested file name for the output. */
  fileName: string | null;
  /** The improper losses among those asked for, and whether each says `expect improper` (the editor's consent). */
  improper?: { loss: string; expected: boolean }[];
}

/** LSP request: generated implementation code for one loss or all losses of a document. */
export const GENERATE_REQUEST = "propriety/generate";

/** LSP workspace/executeCommand: the loss summary of a loss (arguments: uri, loss name), shown with window/showMessage. */
export const SHOW_LOSS_SUMMARY_COMMAND = "propriety.showLossSummary";

/** Position of the cursor, as LSP sends it (0-based line, UTF-16 character). */
export interface ProtocolPosition {
  line: number;
  character: number;
}

/** LSP request: the figures of the loss under the cursor, for the client's status bar. */
export const LOSS_SUMMARY_REQUEST = "propriety/lossSummary";

export interface LossSummaryParams {
  uri: string;
  position: ProtocolPosition;
}

/** The status bar's figures of one loss (null when the cursor is outside every loss). */
export interface LossSummaryResult {
  loss: string;
  verdict: LossCurves["verdict"] | null;
  /** One line for the status bar. */
  text: string;
  /** The engine's one-line summary (the tooltip). */
  summary: string;
}

/** LSP request: a self-contained HTML report of one open document (null when it is not open or the page assets are missing). */
export const REPORT_REQUEST = "propriety/report";

export interface ReportParams {
  uri: string;
}

export interface ReportResult {
  html: string;
}

/** LSP notification (server → client): a full analysis of a document version was published. */
export const ANALYSED_NOTIFICATION = "propriety/analysed";

export interface AnalysedParams {
  uri: string;
  version: number;
}

/** Messages between the extension host and the curve viewer webview. */
export type ViewerToHost =
  | { type: "ready" }
  | { type: "setParam"; loss: string; name: string; value: number; seq?: number }
  | { type: "setEta"; eta: number }
  | { type: "selectLosses"; losses: string[] };

export type HostToViewer =
  | { type: "curves"; data: CurvesResult; eta: number; seq?: number; focus?: string }
  | { type: "error"; message: string };
