import { isRouteErrorResponse, Link, useRouteError } from "react-router";

/** The shared error boundary for pages: says what happened in words, never a stack in production. */
export function ErrorBoundary() {
  const error = useRouteError();
  let title = "Something went wrong";
  let detail = "The page could not be shown. Try again in a moment.";
  if (isRouteErrorResponse(error)) {
    const message = (error.data as { message?: string } | undefined)?.message;
    if (error.status === 404) {
      title = "Not found";
      detail = "There is nothing here, or you are not a member of this organisation.";
    } else if (error.status === 403) {
      title = "Not allowed";
      detail = message ?? "Your role does not allow this.";
    } else {
      title = `Error ${error.status}`;
      detail = message ?? detail;
    }
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message;
  }
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
