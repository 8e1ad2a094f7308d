// Sends a step-test CSV to the compute API with XMLHttpRequest, the one browser API that
// reports upload progress. The API's own words come back as the error message.
import type { FopdtModel } from "~/lib/control";

export type IdentifyAnswer = { model: FopdtModel; fit: { rmse: number; r2: number } };

export type UploadProgress = { phase: "uploading"; fraction: number } | { phase: "fitting" };

export class UploadError extends Error {}

export function uploadStepTest(file: Blob, fileName: string, onProgress: (progress: UploadProgress) => void, signal?: AbortSignal): Promise<IdentifyAnswer> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    const form = new FormData();
    form.append("file", file, fileName);
    form.append("method", "least-squares");
    xhr.open("POST", "/api/v1/compute/identify");
    xhr.responseType = "json";
    xhr.upload.onprogress = (event) => {
      if (event.lengthComputable) onProgress({ phase: "uploading", fraction: event.loaded / event.total });
    };
    xhr.upload.onload = () => onProgress({ phase: "fitting" });
    xhr.onload = () => {
      const body = xhr.response as { error?: { message?: string } } & Partial<IdentifyAnswer> | null;
      if (xhr.status >= 200 && xhr.status < 300 && body?.model) {
        resolve({ model: body.model, fit: body.fit! });
        return;
      }
      const message = body?.error?.message;
      if (xhr.status === 401) reject(new UploadError("Your session has ended. Sign in again, then upload the file once more."));
      else if (xhr.status === 413) reject(new UploadError(message ?? "The file is too large: at most 5 MB."));
      else reject(new UploadError(message ? `The step test could not be fitted: ${message}` : `The server answered ${xhr.status}; the step test was not fitted.`));
    };
    xhr.onerror = () => reject(new UploadError("The upload did not reach the server. Check the connection and try again."));
    xhr.onabort = () => reject(new UploadError("The upload was cancelled."));
    signal?.addEventListener("abort", () => xhr.abort(), { once: true });
    onProgress({ phase: "uploading", fraction: 0 });
    xhr.send(form);
  });
}
