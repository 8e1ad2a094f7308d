// The pill every workflow state is shown in (gain sets, releases, retune requests): icon + word,
// never colour alone. The caller's table of states gives the tone, icon and word.
export type StateLook = { icon: string; word: string; className: string };

export function StatePill({ look }: { look: StateLook }) {
  return (
    <span className={`inline-flex items-center gap-1 whitespace-nowrap rounded-full border px-2 py-0.5 text-xs font-medium ${look.className}`}>
      <span aria-hidden="true">{look.icon}</span>
      {look.word}
    </span>
  );
}
