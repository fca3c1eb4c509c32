import { BrandMark } from '@/app/components/ui';

export default function AuthLayout({ children }: { children: React.ReactNode }) {
  return (
    <main className="flex min-h-screen items-center justify-center bg-ink-900 px-4 py-12">
      <div className="w-full max-w-md">
        <div className="mb-6 flex items-center gap-3 text-white">
          <BrandMark className="h-10 w-10" />
          <div>
            <p className="text-xl font-semibold tracking-tight">Benchwire</p>
            <p className="text-sm text-ink-300">From the analyzer’s cable to the patient record.</p>
          </div>
        </div>
        <div className="rounded-xl bg-paper p-6 shadow-xl">{children}</div>
      </div>
    </main>
  );
}
