import React from 'react';
import { ActivityScreen } from '../../components/activity-screen';
import { useActivity } from '../../hooks/activity';

export default function Activity() {
  return <ActivityScreen state={useActivity()} />;
}
