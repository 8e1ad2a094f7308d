import { useEffect, useRef, useState, type ReactNode } from "react";

/** Measures its own width (ResizeObserver) and renders a chart once the width is known. */
export function SizedBox({ height, children }: { height: number; children: (width: number) => ReactNode }) {
  const ref = useRef<HTMLDivElement>(null);
  const [width, setWidth] = useState(0);
  useEffect(() => {
    const element = ref.current;
    if (!element) return;
    const observer = new ResizeObserver((entries) => setWidth(Math.floor(entries[0].contentRect.width)));
    observer.observe(element);
    return () => observer.disconnect();
  }, []);
  return <div ref={ref} style={{ height }}>{width > 0 ? children(width) : null}</div>;
}
