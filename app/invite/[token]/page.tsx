import Link from "next/link";
import { AuthCard } from "@/components/auth/auth-card";
import { AcceptInvitation, SignOutAndContinue } from "@/components/labs/accept-invitation";
import { roleLabels } from "@/lib/permissions";
import { invitationToken } from "@/lib/schemas/lab";
import { currentUser } from "@/lib/server/access";
import { HttpError } from "@/lib/server/errors";
import { previewInvitation } from "@/lib/server/labs";

export const metadata = { title: "Invitation" };

export default async function InvitationPage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const parsed = invitationToken.safeParse(token);
  const invitation = parsed.success
    ? await previewInvitation(parsed.data).catch((error) => {
        if (error instanceof HttpError && error.status === 404) return null;
        throw error;
      })
    : null;
  if (!invitation) {
    return (
      <AuthCard title="Invitation not found">
        <p className="text-sm text-paper-700">This invitation link is not valid. Check that the whole link was copied, or ask the lab owner for a new one.</p>
      </AuthCard>
    );
  }
  const here = `/invite/${token}`;
  const user = await currentUser();
  const statusText = {
    accepted: "This invitation was already used.",
    revoked: "This invitation was withdrawn or replaced by a newer one.",
    expired: "This invitation has expired. Ask the lab owner for a new one.",
  } as const;

  return (
    <AuthCard title={`Join ${invitation.labName}`}>
      <dl className="mb-4 grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
        <dt className="text-paper-700">Role</dt>
        <dd>{roleLabels[invitation.role]}</dd>
        <dt className="text-paper-700">For</dt>
        <dd>{invitation.email}</dd>
        <dt className="text-paper-700">Expires</dt>
        <dd className="num">{invitation.expiresAt.slice(0, 16).replace("T", " ")} UTC</dd>
      </dl>
      {invitation.status !== "pending" ? (
        <p role="alert" className="text-sm font-medium text-fault-700">
          {statusText[invitation.status]}
        </p>
      ) : !user ? (
        <div className="space-y-3 text-sm">
          <p>Sign in as {invitation.email}, or create an account with that address, to accept.</p>
          <div className="flex gap-2">
            <Link
              href={`/signup?email=${encodeURIComponent(invitation.email)}&callbackUrl=${encodeURIComponent(here)}`}
              className="rounded bg-flux-700 px-3 py-1.5 font-medium text-white hover:bg-flux-800"
            >
              Create account
            </Link>
            <Link
              href={`/signin?email=${encodeURIComponent(invitation.email)}&callbackUrl=${encodeURIComponent(here)}`}
              className="rounded border border-paper-300 px-3 py-1.5 font-medium hover:bg-paper-100"
            >
              Sign in
            </Link>
          </div>
        </div>
      ) : user.email !== invitation.email ? (
        <div className="space-y-3 text-sm">
          <p role="alert">
            You are signed in as {user.email}, but this invitation is for {invitation.email}. Sign in with that address to accept it.
          </p>
          <SignOutAndContinue returnTo={here} />
        </div>
      ) : (
        <AcceptInvitation token={token} labName={invitation.labName} />
      )}
    </AuthCard>
  );
}
