@borrowing
Feature: Borrowing tools
  Members borrow tools from the shed and pay a deposit.

  Background:
    Given I sign in as "maria"

  Scenario: Reserve a drill
    When I search the catalogue for "drill"
    And I reserve the tool
    Then I see the reservation

  @wip
  Scenario: Reserve with a voucher
    When I reserve the tool
    And I pay the deposit with voucher "V-12"
    Then the deposit is paid

  Rule: Deposits over 50 need a card
    Scenario Outline: Pay the deposit
      When I pay a deposit of <amount> by <method>
      Then I see the receipt

      Examples: small
        | amount | method |
        | 20     | card   |
        | 30     | cash   |

      @slow
      Examples: large
        | amount | method |
        | 80     | card   |
