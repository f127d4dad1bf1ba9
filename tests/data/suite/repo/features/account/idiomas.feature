# language: fr
Fonctionnalité: Réservations
  Scénario: Réserver une perceuse
    Soit je me connecte
    Quand je réserve l'outil
    Alors je vois la réservation
