"use client";

import { useRouter } from "next/navigation";
import { signOut } from "next-auth/react";
import { useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError } from "@/components/ui/field";
import { api, ApiError } from "@/lib/client/api";

export function AcceptInvitation({ token, labName }: { token: string; labName: string }) {
  const router = useRouter();
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  return (
    <div className="space-y-3">
      <FormError message={error} />
      <Button
        busy={busy}
        className="w-full"
        onClick={async () => {
          setBusy(true);
          setError(null);
          try {
            const { labId } = await api<{ labId: number }>(`/api/invitations/${token}/accept`, { method: "POST", body: {} });
            router.replace(`/labs/${labId}/datasets`);
            router.refresh();
          } catch (e) {
            setError(e instanceof ApiError ? e.message : "Could not accept the invitation.");
            setBusy(false);
          }
        }}
      >
        Accept and join {labName}
      </Button>
    </div>
  );
}

export function SignOutAndContinue({ returnTo }: { returnTo: string }) {
  return (
    <Button variant="secondary" onClick={() => signOut({ callbackUrl: `/signin?callbackUrl=${encodeURIComponent(returnTo)}` })}>
      Sign out and switch account
    </Button>
  );
}
