import React from 'react';
import { OverviewScreen } from '../../components/overview-screen';
import { useOverview } from '../../hooks/overview';
import { useMe } from '../../hooks/session';

export default function Overview() {
  const me = useMe();
  const overview = useOverview();
  return <OverviewScreen name={me.data?.name ?? ''} state={overview} />;
}
