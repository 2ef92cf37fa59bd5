import { useEffect } from "react";
import { useRevalidator } from "react-router";

export { StatusCommands } from "~/components/schedule/status-commands";

/** Re-reads the page's data every `seconds` while the tab is visible: the list moves without a reload. */
export function usePolling(seconds: number) {
  const revalidator = useRevalidator();
  useEffect(() => {
    const t = setInterval(() => {
      if (document.visibilityState === "visible" && revalidator.state === "idle") revalidator.revalidate();
    }, seconds * 1000);
    return () => clearInterval(t);
  }, [revalidator, seconds]);
}
