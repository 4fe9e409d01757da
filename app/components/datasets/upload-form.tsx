import { useRef, useState, type FormEvent } from "react";
import { useNavigate, useRevalidator } from "react-router";
import { formatBytes } from "./format";

type Phase = "idle" | "uploading" | "checking" | "failed";

interface UploadEventLine {
  type: "progress" | "result";
  phase?: "parse" | "screen" | "store";
  fraction?: number;
  result?: { ok: true; versionId: string; version: number } | { ok: false; problems: string[] };
}

const STEP_WORDS = {
  parse: "Reading and checking the file",
  screen: "Screening for identifiers and comparing versions",
  store: "Storing",
} as const;

function Bar({ label, value }: { label: string; value: number }) {
  const pct = Math.round(value * 100);
  return (
    <div>
      <div className="mb-0.5 flex justify-between text-xs">
        <span>{label}</span>
        <span className="num">{pct}%</span>
      </div>
      <div
        role="progressbar"
        aria-label={label}
        aria-valuemin={0}
        aria-valuemax={100}
        aria-valuenow={pct}
        className="h-2 w-full rounded-sm border border-rule bg-white"
      >
        <div className="h-full bg-accent" style={{ width: `${pct}%` }} />
      </div>
    </div>
  );
}

/**
 * The data manager's upload form. The file goes up with XMLHttpRequest (the one browser API
 * that reports upload progress); the server's answer streams the parse progress line by line.
 */
export function UploadForm({
  action,
  maxBytes,
  datasetNames,
  versionUrl,
}: {
  action: string;
  maxBytes: number;
  datasetNames: string[];
  versionUrl: (versionId: string) => string;
}) {
  const [phase, setPhase] = useState<Phase>("idle");
  const [sent, setSent] = useState(0);
  const [step, setStep] = useState<{ phase: keyof typeof STEP_WORDS; fraction: number }>({
    phase: "parse",
    fraction: 0,
  });
  const [problems, setProblems] = useState<string[]>([]);
  const [name, setName] = useState("");
  const nameTouched = useRef(false);
  const navigate = useNavigate();
  const revalidator = useRevalidator();

  function onFile(file: File | undefined) {
    if (!file || nameTouched.current) return;
    const base = file.name
      .replace(/\.[^.]+$/, "")
      .replace(/[^A-Za-z0-9_]/g, "_")
      .replace(/^[^A-Za-z]+/, "");
    setName(base.slice(0, 32).toLowerCase());
  }

  function onSubmit(e: FormEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = e.currentTarget;
    const data = new FormData(form);
    const file = data.get("file");
    if (!(file instanceof File) || file.name === "") {
      setProblems(["Choose a CSV, Dataset-JSON or XPORT (.xpt) file to upload."]);
      setPhase("failed");
      return;
    }
    if (file.size === 0) {
      setProblems([`The file ${file.name} is empty.`]);
      setPhase("failed");
      return;
    }
    if (file.size > maxBytes) {
      setProblems([`${file.name} is ${formatBytes(file.size)}; the limit is ${formatBytes(maxBytes)}.`]);
      setPhase("failed");
      return;
    }
    // Text fields first, the file last, so the server has them before the bytes stream in.
    const body = new FormData();
    for (const [k, v] of data.entries()) if (k !== "file") body.append(k, v);
    body.append("file", file);
    setProblems([]);
    setSent(0);
    setStep({ phase: "parse", fraction: 0 });
    setPhase("uploading");
    const xhr = new XMLHttpRequest();
    let seen = 0;
    let result: UploadEventLine["result"] | null = null;
    const readLines = () => {
      const text = xhr.responseText;
      const end = text.lastIndexOf("\n");
      if (end < seen) return;
      for (const line of text.slice(seen, end).split("\n")) {
        if (!line.trim()) continue;
        const ev = JSON.parse(line) as UploadEventLine;
        if (ev.type === "progress" && ev.phase) setStep({ phase: ev.phase, fraction: ev.fraction ?? 0 });
        if (ev.type === "result") result = ev.result ?? null;
      }
      seen = end + 1;
    };
    xhr.upload.onprogress = (ev) => ev.lengthComputable && setSent(ev.loaded / ev.total);
    xhr.upload.onload = () => {
      setSent(1);
      setPhase("checking");
    };
    xhr.onprogress = readLines;
    xhr.onload = () => {
      if (xhr.responseText && !xhr.responseText.endsWith("\n")) {
        try {
          result = (JSON.parse(xhr.responseText) as UploadEventLine).result ?? null;
        } catch {
          result = {
            ok: false,
            problems: [xhr.responseText.slice(0, 300) || `The upload failed (${xhr.status}).`],
          };
        }
      } else readLines();
      const r = result as UploadEventLine["result"] | null;
      if (r?.ok) {
        form.reset();
        setPhase("idle");
        revalidator.revalidate();
        navigate(versionUrl(r.versionId));
      } else {
        setProblems(
          r && !r.ok ? r.problems : [`The upload failed (${xhr.status}). Nothing was stored; try again.`],
        );
        setPhase("failed");
      }
    };
    xhr.onerror = () => {
      setProblems(["The connection broke during the upload. Nothing was stored; try again."]);
      setPhase("failed");
    };
    xhr.open("POST", action);
    xhr.setRequestHeader("Accept", "application/x-ndjson");
    xhr.send(body);
  }

  const busy = phase === "uploading" || phase === "checking";
  return (
    <form
      method="post"
      encType="multipart/form-data"
      action={action}
      onSubmit={onSubmit}
      className="space-y-3"
      noValidate
    >
      <div>
        <label htmlFor="file" className="label">
          File
        </label>
        <input
          id="file"
          name="file"
          type="file"
          required
          accept=".xpt,.json,.ndjson,.csv,.tsv,.txt,text/csv,application/json"
          className="field"
          aria-describedby="file-hint"
          onChange={(e) => onFile(e.currentTarget.files?.[0])}
          disabled={busy}
        />
        <p id="file-hint" className="mt-1 text-xs text-ink-soft">
          XPORT transport file (.xpt, version 5), CDISC Dataset-JSON 1.1 (.json or .ndjson) or CSV (comma,
          semicolon or tab; UTF-8); at most {formatBytes(maxBytes)}.
        </p>
      </div>
      <div>
        <label htmlFor="datasetName" className="label">
          Dataset name
        </label>
        <input
          id="datasetName"
          name="datasetName"
          className="field"
          required
          list="dataset-names"
          value={name}
          onChange={(e) => {
            nameTouched.current = true;
            setName(e.currentTarget.value);
          }}
          aria-describedby="datasetName-hint"
          disabled={busy}
        />
        <datalist id="dataset-names">
          {datasetNames.map((n) => (
            <option key={n} value={n} />
          ))}
        </datalist>
        <p id="datasetName-hint" className="mt-1 text-xs text-ink-soft">
          As the analysis plan names it, e.g. adeff. An existing name adds its next version.
        </p>
      </div>
      <details className="text-sm">
        <summary className="cursor-pointer text-xs font-semibold uppercase tracking-wide text-ink-soft">
          Key and types (optional)
        </summary>
        <div className="mt-2 space-y-3">
          <div>
            <label htmlFor="keyColumns" className="label">
              Key columns
            </label>
            <input
              id="keyColumns"
              name="keyColumns"
              className="field"
              placeholder="when empty: the key the file declares, else detected; e.g. usubjid"
              disabled={busy}
            />
          </div>
          <div>
            <label htmlFor="numericColumns" className="label">
              Columns that must be numeric (CSV)
            </label>
            <input
              id="numericColumns"
              name="numericColumns"
              className="field"
              placeholder="e.g. age, base, chg"
              disabled={busy}
            />
          </div>
          <div>
            <label htmlFor="readByValues" className="label">
              Read by their values, not their declared type (Dataset-JSON)
            </label>
            <input
              id="readByValues"
              name="readByValues"
              className="field"
              placeholder="e.g. avgdd"
              aria-describedby="readByValues-hint"
              disabled={busy}
            />
            <p id="readByValues-hint" className="mt-1 text-xs text-ink-soft">
              For a column whose values do not match its declared type, e.g. decimals in a column declared
              integer.
            </p>
          </div>
          <div>
            <label htmlFor="readByValuesReason" className="label">
              Reason for reading them by their values (recorded in the audit trail)
            </label>
            <textarea
              id="readByValuesReason"
              name="readByValuesReason"
              rows={2}
              className="field"
              disabled={busy}
            />
          </div>
        </div>
      </details>
      <button type="submit" className="btn" disabled={busy}>
        {busy ? "Uploading…" : "Upload and check"}
      </button>
      {phase === "uploading" || phase === "checking" ? (
        <div className="space-y-2" aria-live="polite">
          <Bar label="Uploading" value={sent} />
          {phase === "checking" ? (
            <Bar
              label={STEP_WORDS[step.phase]}
              value={step.phase === "parse" ? step.fraction : step.phase === "screen" ? 1 : 1}
            />
          ) : null}
        </div>
      ) : null}
      {phase === "failed" && problems.length > 0 ? (
        <div role="alert" className="rounded-sm border border-finding/60 bg-white p-3 text-sm">
          <p className="mb-1 font-semibold text-finding">Nothing was stored. Fix these and upload again:</p>
          <ul className="list-disc space-y-0.5 pl-5">
            {problems.map((p) => (
              <li key={p}>{p}</li>
            ))}
          </ul>
        </div>
      ) : null}
    </form>
  );
}
