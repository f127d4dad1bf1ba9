# encoding: iso-8859-1
Feature: Latin declared
  Scenario: café
    Given I order a café
