import { isRouteErrorResponse, Link, useRouteError } from "react-router";

/** What to tell a person about a thrown error: a title and a sentence, never a stack in production. */
export function describeRouteError(error: unknown): { title: string; detail: string; stack?: string } {
  if (isRouteErrorResponse(error)) {
    const message = (error.data as { message?: string } | undefined)?.message;
    if (error.status === 404) return { title: "Not found", detail: "There is nothing here, or you are not a member of this organisation." };
    if (error.status === 403) return { title: "Not allowed", detail: message ?? "Your role does not allow this." };
    return { title: `Error ${error.status}`, detail: message ?? error.statusText ?? "The page could not be shown. Try again in a moment." };
  }
  if (import.meta.env.DEV && error instanceof Error) return { title: "Something went wrong", detail: error.message, stack: error.stack };
  return { title: "Something went wrong", detail: "The page could not be shown. Try again in a moment." };
}

/** The shared error boundary for pages inside the app's frame (root.tsx uses the same words for the whole document). */
export function ErrorBoundary() {
  const { title, detail } = describeRouteError(useRouteError());
  return (
    <div className="px-5 py-16 sm:px-8">
      <h1 className="text-xl font-semibold">{title}</h1>
      <p className="mt-2 text-sm text-ink-soft">{detail}</p>
      <Link to="/" className="mt-4 inline-block text-sm font-medium text-accent hover:underline">
        Back to your organisations
      </Link>
    </div>
  );
}
