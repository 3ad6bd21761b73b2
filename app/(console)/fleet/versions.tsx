import React from 'react';
import { useRouter } from 'expo-router';
import { VersionsScreen } from '../../../components/fleet-versions';
import { fleetHref, useVersionMatrix } from '../../../hooks/fleet';

export default function Versions() {
  const router = useRouter();
  const versions = useVersionMatrix();
  return (
    <VersionsScreen
      state={versions}
      versionHref={(modelId, firmware, board) => fleetHref({ modelId, version: firmware ?? undefined, board })}
      onOpenRelease={(id) => router.push(`/releases/${id}` as never)}
    />
  );
}
