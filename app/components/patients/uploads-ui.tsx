import { useRef, useState } from "react";
import { Form, useNavigation, useRevalidator, useSearchParams } from "react-router";
import { Pager, type TablePaging } from "~/components/data-table";
import { Button } from "~/components/ui/button";
import { Icon } from "~/components/ui/icon";
import { Notice } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";

type Doc = {
  id: string;
  kind: string;
  description: string;
  originalName: string;
  contentType: string;
  sizeBytes: number;
  hasThumbnail: boolean;
  createdAt: string;
  uploadedBy: string;
  reviewedAt: string | null;
  reviewedBy: string | null;
};
const KIND_LABEL: Record<string, string> = {
  fundus_photo: "Fundus photograph",
  field_printout: "Visual field printout",
  outside_record: "Outside record",
  other: "Other",
};

/**
 * A patient's or an exam's files; with `paging`, one page of them and links to the others (`?docs=`).
 * With `reviewFrom` (the page's own path, for clinical roles) each unreviewed file has "Mark reviewed".
 */
export function DocumentList({
  patientId,
  documents,
  paging,
  reviewFrom,
}: {
  patientId: string;
  documents: Doc[];
  paging?: TablePaging;
  reviewFrom?: string;
}) {
  const [params] = useSearchParams();
  if (!documents.length && !(paging && paging.total > 0)) return <p className="text-muted">No files attached.</p>;
  return (
    <>
      <DocumentTiles patientId={patientId} documents={documents} reviewFrom={reviewFrom} />
      {paging ? <Pager paging={{ ...paging, noun: ["file", "files"] }} params={params} pageParam="docs" /> : null}
    </>
  );
}

function DocumentTiles({
  patientId,
  documents,
  reviewFrom,
}: {
  patientId: string;
  documents: Doc[];
  reviewFrom?: string;
}) {
  return (
    <ul className="grid gap-3 sm:grid-cols-2 lg:grid-cols-3">
      {documents.map((d) => (
        <li key={d.id} id={`document-${d.id}`} className="flex scroll-mt-24 gap-3 rounded-md border border-line p-3">
          {d.hasThumbnail ? (
            <img
              src={`/patients/${patientId}/documents/${d.id}/thumbnail`}
              alt={`Thumbnail of ${d.originalName}`}
              className="size-20 rounded object-cover"
              loading="lazy"
            />
          ) : (
            <span className="flex size-20 items-center justify-center rounded bg-canvas text-xs font-bold text-muted">
              PDF
            </span>
          )}
          <div className="min-w-0 text-sm">
            <a
              href={`/patients/${patientId}/documents/${d.id}/file`}
              target="_blank"
              rel="noreferrer"
              className="block truncate font-semibold text-accent-800 underline"
            >
              {d.originalName}
            </a>
            <p className="text-muted">
              {KIND_LABEL[d.kind] ?? d.kind} · {(d.sizeBytes / 1024).toFixed(0)} KB
            </p>
            <p className="text-muted">
              {formatDate(d.createdAt)} · {d.uploadedBy}
            </p>
            {d.description ? <p>{d.description}</p> : null}
            <ReviewState patientId={patientId} doc={d} reviewFrom={reviewFrom} />
          </div>
        </li>
      ))}
    </ul>
  );
}

/** Who reviewed a file and when, or (for a clinician) the button that records it. */
function ReviewState({ patientId, doc, reviewFrom }: { patientId: string; doc: Doc; reviewFrom?: string }) {
  const navigation = useNavigation();
  const action = `/patients/${patientId}/documents/${doc.id}/review`;
  if (doc.reviewedAt)
    return (
      <p className="mt-1 flex items-center gap-1 text-muted" data-testid="document-reviewed">
        <Icon name="check" /> Reviewed by {doc.reviewedBy ?? "a colleague"}, {formatDate(doc.reviewedAt)}
      </p>
    );
  if (!reviewFrom) return <p className="mt-1 font-semibold">Not reviewed yet</p>;
  return (
    <Form method="post" action={action} className="mt-2" preventScrollReset>
      <input type="hidden" name="back" value={reviewFrom} />
      <p className="mb-1 font-semibold">Not reviewed yet</p>
      <Button
        type="submit"
        variant="secondary"
        pending={navigation.state === "submitting" && navigation.formAction === action}
      >
        Mark reviewed<span className="sr-only">: {doc.originalName}</span>
      </Button>
    </Form>
  );
}

/** Uploads one file with a progress bar (XMLHttpRequest reports upload progress; fetch does not). */
export function UploadForm({ patientId, examId }: { patientId: string; examId?: string }) {
  const [progress, setProgress] = useState<number | null>(null);
  const [message, setMessage] = useState<{ tone: "error" | "success"; text: string } | null>(null);
  const formRef = useRef<HTMLFormElement>(null);
  const revalidator = useRevalidator();
  const idp = examId ? `up-${examId}` : `up-${patientId}`;

  function submit(e: React.FormEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = new FormData(e.currentTarget);
    const file = form.get("file");
    if (!(file instanceof File) || !file.size) {
      setMessage({ tone: "error", text: "Choose a file to attach." });
      return;
    }
    setMessage(null);
    setProgress(0);
    const xhr = new XMLHttpRequest();
    xhr.open("POST", "/api/uploads");
    xhr.upload.onprogress = (ev) => ev.lengthComputable && setProgress(Math.round((ev.loaded / ev.total) * 100));
    xhr.onload = () => {
      setProgress(null);
      let body: { ok?: boolean; message?: string } = {};
      try {
        body = JSON.parse(xhr.responseText);
      } catch {
        /* not JSON */
      }
      if (xhr.status === 201) {
        setMessage({ tone: "success", text: `${file.name} attached.` });
        formRef.current?.reset();
        revalidator.revalidate();
      } else setMessage({ tone: "error", text: body.message ?? `Upload refused (${xhr.status}).` });
    };
    xhr.onerror = () => {
      setProgress(null);
      setMessage({ tone: "error", text: "The upload failed: the connection was lost. Try again." });
    };
    xhr.send(form);
  }

  return (
    <form
      ref={formRef}
      onSubmit={submit}
      className="grid gap-3 sm:grid-cols-[1fr_12rem_1fr_auto] sm:items-end"
      aria-label="Attach a file"
    >
      <input type="hidden" name="patientId" value={patientId} />
      {examId ? <input type="hidden" name="examId" value={examId} /> : null}
      <div>
        <label htmlFor={`${idp}-file`} className="mb-1 block text-sm font-semibold">
          File (JPEG, PNG, WebP or PDF, up to 15 MB)
        </label>
        <input
          id={`${idp}-file`}
          name="file"
          type="file"
          accept="image/jpeg,image/png,image/webp,application/pdf"
          className="block w-full text-sm"
        />
      </div>
      <div>
        <label htmlFor={`${idp}-kind`} className="mb-1 block text-sm font-semibold">
          Kind
        </label>
        <select
          id={`${idp}-kind`}
          name="kind"
          defaultValue="fundus_photo"
          className="block w-full rounded-md border border-line bg-white px-2 py-2 text-sm"
        >
          {Object.entries(KIND_LABEL).map(([k, v]) => (
            <option key={k} value={k}>
              {v}
            </option>
          ))}
        </select>
      </div>
      <div>
        <label htmlFor={`${idp}-desc`} className="mb-1 block text-sm font-semibold">
          Description (optional)
        </label>
        <input
          id={`${idp}-desc`}
          name="description"
          className="block w-full rounded-md border border-line px-3 py-2 text-sm"
        />
      </div>
      <Button type="submit" variant="secondary" pending={progress !== null}>
        <Icon name="check" /> Attach
      </Button>
      {progress !== null ? (
        <div className="sm:col-span-4">
          <label htmlFor={`${idp}-progress`} className="text-sm font-semibold">
            Uploading… {progress}%
          </label>
          <progress id={`${idp}-progress`} max={100} value={progress} className="block h-2 w-full" />
        </div>
      ) : null}
      {message ? (
        <div className="sm:col-span-4">
          <Notice tone={message.tone} title={message.text} />
        </div>
      ) : null}
    </form>
  );
}
