import type { ReactNode } from "react";

/** The single centred card of the signed-out pages (password reset, sign-in links). */
export function AuthCard({ title, children }: { title: ReactNode; children: ReactNode }) {
  return (
    <main id="main" className="flex min-h-screen items-center justify-center px-4 py-12">
      <div className="w-full max-w-md rounded-lg border border-line bg-white p-8 shadow-sm">
        <h1 className="text-2xl">{title}</h1>
        {children}
      </div>
    </main>
  );
}
